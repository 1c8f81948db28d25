"""``planner plan STUDY``: the whole chain, from study file to workbook and JSON."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from planner.cli import EXIT_INFEASIBLE, options, progress_enabled


@click.command("plan")
@click.argument("study", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", "out_path", type=click.Path(dir_okay=False, path_type=Path),
              help="Workbook to write (default output/<study name>.xlsx).")
@click.option("--json", "json_path", type=str, default=None,
              help="Also write the plan as JSON to this path ('-' for standard output).")
@click.pass_context
def plan_command(ctx, study, out_path, json_path):
    """Validate STUDY, model every site and candidate pack, optimise the fleet's
    replacements and trips, and write the plan workbook (and JSON).

    Exit codes: 0 a plan was written; 2 bad input or usage; 3 no feasible plan
    (the workbook explaining why is still written).

    \b
    Example:
      planner plan scenarios/quick.toml --json output/quick.json
    """
    from planner.pipeline import PROGRESS_STAGES, run_study
    from planner.report import plan_to_json_text, write_json, write_workbook
    from planner.scenario import load_study

    opts = options(ctx)
    study_obj = load_study(study)
    out = out_path or _default_workbook(study_obj)
    quiet = opts.get("quiet") or json_path == "-"

    with _progress(ctx, len(study_obj.sites) + PROGRESS_STAGES) as advance:
        plan = run_study(study_obj, progress=advance)

    write_workbook(plan, out)
    json_target = json_path or study_obj.settings["output"]["json"] or None
    if json_target == "-":
        sys.stdout.write(plan_to_json_text(plan))
    elif json_target:
        write_json(plan, Path(json_target))

    if not quiet:
        click.echo(_summary(plan, out), err=True)
    if plan.get("unserved_sites") or plan["solver"]["status"] == "infeasible":
        ctx.exit(EXIT_INFEASIBLE)


def _default_workbook(study) -> Path:
    configured = study.settings["output"]["workbook"]
    if configured:
        return (study.path.parent / configured).resolve()
    return Path("output") / f"{study.stem}.xlsx"


class _progress:
    """A progress bar on stderr when it is a terminal and --quiet is off."""

    def __init__(self, ctx, total):
        self.enabled = progress_enabled(ctx)
        self.total = total
        self.bar = None

    def __enter__(self):
        if self.enabled:
            self.bar = click.progressbar(length=self.total, label="Planning", file=sys.stderr)
            self.bar.__enter__()

        def advance(step=1, label=None):
            if self.bar is not None:
                if label:
                    self.bar.label = label
                self.bar.update(step)
        return advance

    def __exit__(self, *exc):
        if self.bar is not None:
            self.bar.__exit__(*exc)
        return False


#: Sites not served listed one per line on the console; beyond it, a count.
MAX_UNSERVED_LINES = 10


def _summary(plan, out) -> str:
    from planner.report.wording import coverage_text, downtime_share, drivers_text, plan_status_text

    currency = plan["study"]["currency"]
    n_sites = len(plan["sites"])
    lines = [
        f"Plan for {plan['study']['name']}: {n_sites} sites, {plan['study']['horizon_years']} years",
        f"  total present cost: {plan['total_present_cost']:,.0f} {currency} ({plan_status_text(plan)})",
        "  fleet cost with each chemistry wherever it can serve (other sites keep their best design):",
    ]
    for row in plan.get("chemistry_comparison", []):
        served = row.get("sites_served") or 0
        cost = (f"{row['total_with_others_present_cost']:,.0f} {currency}, " if served else "")
        lines.append(f"    {row['chemistry']}: {cost}{coverage_text(row, n_sites)}")
        share = downtime_share(row)
        if served and share is not None:
            lines.append(f"      equipment {row['equipment']:,.0f}, trips and labour "
                         f"{row['trips_and_labour']:,.0f}, days off air {row['downtime']:,.0f} "
                         f"({share:.0%}), failure risk {row['failure_risk']:,.0f}")
        drivers = drivers_text(row, currency)
        if served and drivers:
            lines.append(f"      most of the difference to the plan: {drivers}")
    unserved = plan.get("unserved_sites", [])
    for item in unserved[:MAX_UNSERVED_LINES]:
        lines.append(f"  NOT SERVED {item['id']}: {item['reason']}")
    if len(unserved) > MAX_UNSERVED_LINES:
        lines.append(f"  ... and {len(unserved) - MAX_UNSERVED_LINES:,} more sites not served "
                     "(all listed on the workbook's Cautions sheet)")
    lines.append(f"  workbook: {out}")
    return "\n".join(lines)
