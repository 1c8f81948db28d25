import sys

from planner.validation.published import main

sys.exit(main())
