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
@click.option("--workers", type=click.IntRange(min=1), default=None,
              help="Processes that share the per-site stages and the re-solves "
                   "(default: all cores). The plan does not depend on it.")
@click.pass_context
def plan_command(ctx, study, out_path, json_path, workers):
    """Validate STUDY, model every site and candidate pack, optimise the fleet's
    replacements and trips, and write the plan workbook (and JSON).

    Exit codes: 0 a plan was written; 2 bad input or usage; 3 no feasible plan
    (the workbook explaining why is still written).

    \b
    Example:
      planner plan scenarios/corvale.toml --json output/corvale.json
    """
    from planner.parallel import default_workers
    from planner.pipeline import progress_steps, run_study
    from planner.report import plan_to_json_text, write_json, write_workbook
    from planner.scenario import load_study

    opts = options(ctx)
    study_obj = load_study(study)
    out = out_path or _default_workbook(study_obj)
    quiet = opts.get("quiet") or json_path == "-"

    with _progress(ctx, progress_steps(study_obj)) as advance:
        plan = run_study(study_obj, progress=advance, workers=workers or default_workers())

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
    """A progress bar on stderr when it is a terminal and --quiet is off: the stage as
    its label, and click's estimate of the time left (from the pace of the steps so far)."""

    def __init__(self, ctx, total):
        self.enabled = progress_enabled(ctx)
        self.total = total
        self.bar = None

    def __enter__(self):
        if self.enabled:
            self.bar = click.progressbar(length=self.total, label="Planning", file=sys.stderr,
                                         show_eta=True, show_percent=True)
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


def _summary(plan, out) -> str:
    currency = plan["study"]["currency"]
    solver = plan["solver"]
    lines = [
        f"Plan for {plan['study']['name']}: {len(plan['sites'])} sites, "
        f"{plan['study']['horizon_years']} years",
        f"  total present cost: {plan['total_present_cost']:,.0f} {currency} "
        f"(solver {solver['name']}, {solver['status']}, gap {solver['gap_frac']:.2%})",
    ]
    n_sites = len(plan["sites"])
    lines.append("  fleet cost with each chemistry wherever it can serve:")
    for row in plan.get("chemistry_comparison", []):
        text = f"{row['total_with_others_present_cost']:,.0f} {currency}"
        unserved = row.get("sites_unserved") or []
        if len(unserved) == n_sites:
            text = "cannot serve any site"
        elif unserved:
            verb = "keeps" if len(unserved) == 1 else "keep"
            text += (f" ({n_sites - len(unserved)} of {n_sites} sites; "
                     f"{len(unserved)} {verb} another chemistry)")
        lines.append(f"    {row['chemistry']}: {text}")
    for item in plan.get("unserved_sites", []):
        lines.append(f"  NOT SERVED {item['id']}: {item['reason']}")
    lines.append(f"  workbook: {out}")
    return "\n".join(lines)
