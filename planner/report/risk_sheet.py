"""The Sites at risk sheet: which packs may fail before the crew next comes.

One row per site, most at risk first: the probability that the pack in service reaches
end of life before its next planned replacement (``risk_before_next_visit_frac``, see
``planner.plan.visit_risk``), the year of that visit and the expected cost of a failure
before it. Rows above :data:`AT_RISK_FRAC` are highlighted.
"""

from __future__ import annotations

from openpyxl.styles import Font, PatternFill
from openpyxl.utils import get_column_letter

from planner.plan.attention import AT_RISK_FRAC
from planner.report import styles
from planner.report.cells import cell_value
from planner.report.tables import (
    PRINT_FIRST_ROWS,
    Column,
    field_of,
    long_table_print_area,
    plan_sites,
    study_start_year,
    title,
    write_table,
)
from planner.report.wording import chemistry_name

#: Rows printed below the highlighted ones when the list is long (the next most at risk).
PRINT_BELOW_HIGHLIGHT = 10
AT_RISK_FILL = PatternFill("solid", fgColor="F6DDCC")
AT_RISK_FONT = Font(name=styles.FONT_NAME, bold=True, color="7A2E0E")


def _risk(site):
    value = cell_value(site.get("risk_before_next_visit_frac"))
    return value if isinstance(value, int | float) else None


def risk_sheet(ws, plan, fmt) -> None:
    cur, money = fmt["cur"], fmt["money"]
    sites = plan_sites(plan)
    ranked = sorted(sites, key=lambda s: (-(_risk(s) if _risk(s) is not None else -1.0), str(s.get("id"))))
    n_at_risk = sum(1 for s in sites if (_risk(s) or 0.0) > AT_RISK_FRAC)
    title(ws, f"Sites at risk: {n_at_risk:,} of {len(sites):,} sites above {AT_RISK_FRAC:.0%}",
          "Probability that the pack in service fails to carry its site before the next planned "
          "replacement (from the pack spread), most at risk first; highlighted above "
          f"{AT_RISK_FRAC:.0%}. Costs are undiscounted, money of the study start.")
    start = study_start_year(plan)
    cols = [Column("Site id", field_of("id"), width=12),
            Column("Site name", field_of("name")),
            Column("Region", field_of("region"), optional=True),
            Column("Chemistry", lambda s: chemistry_name(s.get("chemistry"), fmt["chemistry_names"]), width=22),
            Column("Risk before the next visit [%]", _risk, styles.PERCENT, width=11),
            Column("Next visit [year]", field_of("next_visit_year"), styles.INTEGER, width=8),
            Column("Next visit [calendar year]",
                   lambda s: start + s["next_visit_year"]
                   if start and isinstance(s.get("next_visit_year"), int) else None,
                   "0", optional=True, width=9),
            Column(f"Expected failure cost before the next visit [{cur}]",
                   field_of("expected_failure_cost_before_next_visit"), money, width=13),
            Column(f"of which days off air [{cur}]",
                   field_of("expected_downtime_cost_before_next_visit"), money, width=12),
            Column("Life [years]", field_of("life_years"), styles.ONE_DECIMAL, width=8),
            Column("Life P10 [years]", field_of("life_p10_years"), styles.ONE_DECIMAL, optional=True,
                   width=8)]
    top = 4
    kept, last = write_table(ws, top, 1, cols, ranked)
    for offset, site in enumerate(ranked):
        if (_risk(site) or 0.0) > AT_RISK_FRAC:
            for c in range(1, len(kept) + 1):
                cell = ws.cell(row=top + 1 + offset, column=c)
                cell.fill = AT_RISK_FILL
                cell.font = AT_RISK_FONT
        else:
            break  # sorted: the rest are below the threshold
    ws.freeze_panes = f"C{top + 1}"
    if last > top:
        ws.auto_filter.ref = f"A{top}:{get_column_letter(len(kept))}{last}"
    styles.landscape_fit_width(ws, title_rows=f"{top}:{top}")
    long_table_print_area(ws, 1, top, last, len(kept), "sites",
                          first_rows=max(PRINT_FIRST_ROWS, n_at_risk + PRINT_BELOW_HIGHLIGHT))
