"""``planner plan STUDY``: the whole chain, from study file to workbook and JSON."""

from __future__ import annotations

import math
import os
import sys
from pathlib import Path

import click

from planner.cli import EXIT_INFEASIBLE, options, progress_enabled
from planner.cli.params import Number
from planner.cli.terminal import printable
from planner.energy.balance import SHORTFALL_CAUSE
from planner.errors import InputError, OutputError
from planner.fileio import (
    OutputBatch,
    is_char_device,
    prepare_target,
    resolve_path,
    same_file,
)


@click.command("plan")
@click.argument("study", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", "out_path", type=str, default=None,
              help="Workbook (.xlsx) to write, or a folder ending in '/' "
                   "(default output/<study name>.xlsx).")
@click.option("--json", "--json-out", "json_path", type=str, default=None, metavar="PATH",
              help="Also write the plan as JSON to PATH ('-' for standard output). --json-out "
                   "is the same option under the name 'planner life' and 'planner climate' use.")
@click.option("--workers", type=Number(minimum=1, maximum=4096, integer=True), default=None,
              help="Processes that share the per-site stages and the re-solves "
                   "(default: all cores). The plan does not depend on it.")
@click.pass_context
def plan_command(ctx, study, out_path, json_path, workers):
    """Validate STUDY, model every site and candidate pack, optimise the fleet's
    replacements and trips, and write the plan workbook (and JSON).

    Exit codes: 0 a plan was written and every site is served; 2 bad input or usage;
    3 some site cannot be served (no design serves it, or it loses more than 1 % of its
    load; the plan for the others and the workbook explaining why are still written);
    4 an output could not be written.

    \b
    Example:
      planner plan scenarios/quick.toml --json output/quick.json
    """
    from planner.parallel import default_workers
    from planner.pipeline import progress_steps, run_study
    from planner.study.loading import load_study

    opts = options(ctx)
    study_obj = load_study(study)
    out, json_target = output_paths(study_obj, out_path, json_path)
    quiet = opts.get("quiet") or json_target == "-"

    with _progress(ctx, progress_steps(study_obj)) as advance:
        plan = run_study(study_obj, progress=advance, workers=workers or default_workers())

    write_outputs(plan, out, json_target)

    if not quiet:
        click.echo(_summary(plan, out), err=True)
    if not_all_served(plan):
        ctx.exit(EXIT_INFEASIBLE)


def not_all_served(plan) -> bool:
    """Whether some site cannot be served (exit code 3): no design serves it, it loses more
    than the stated share of its load (planner.plan.attention), or no plan was found."""
    from planner.plan.attention import sites_not_served

    return bool(plan.get("unserved_sites") or sites_not_served(plan)
                or (plan.get("solver") or {}).get("status") == "infeasible")


def output_paths(study, out_option: str | None, json_option: str | None):
    """The workbook path and the JSON target (a path, "-" or None), checked before planning.

    Command-line paths are taken from the current folder, ``[output]`` paths from the
    study's folder (the real one: see planner.study.loading). A path ending in a separator
    (or naming a folder) means a folder: the workbook is ``<study name>.xlsx`` in it.
    ``-`` as the JSON path, on the command line or in ``[output].json``, is standard output.
    A path that is a symbolic link is written through (the file it points to is replaced;
    the link stays). Refused (exit 2): an empty path; a workbook not named ``.xlsx``; an
    output that is one of the study's inputs or the other output; a folder or special
    file other than a character device (written straight through). A folder that cannot
    be created: exit 4.
    """
    configured = study.settings["output"]
    base = study.path.parent
    for option, value in (("--out", out_option), ("--json", json_option)):
        if value is not None and not value.strip():
            raise InputError(f"{option} is empty; expected a file name (or leave the option out)",
                             source="plan")
    if out_option:
        workbook, source = _as_file(Path(out_option), out_option, study), "--out"
    elif configured["workbook"]:
        workbook = _as_file(base / configured["workbook"], configured["workbook"], study)
        source = "[output].workbook"
    else:
        workbook, source = Path("output") / f"{study.stem}.xlsx", "default workbook"
    if "\x00" not in str(workbook) and workbook.suffix.lower() != ".xlsx" \
            and not is_char_device(workbook):
        raise InputError(f"{source} {printable(workbook)} does not end in .xlsx; expected a "
                         "workbook name like plan.xlsx (or a folder ending in '/')", source="plan")
    json_target, json_source = json_option, "--json"
    if json_target is None and configured["json"]:
        json_source = "[output].json"
        json_target = "-" if configured["json"].strip() == "-" else str(base / configured["json"])
    outputs = [(workbook, source, "plan workbook")]
    if json_target and json_target != "-":
        if json_target.endswith(("/", os.sep)) or os.path.isdir(json_target):
            raise InputError(f"{json_source} {printable(json_target)} is a folder; expected a "
                             "file name such as plan.json", source="plan")
        json_target = Path(json_target)
        outputs.append((json_target, json_source, "plan JSON"))
    real = []
    for path, where, what in outputs:
        try:
            real.append(resolve_path(path, what=f"the {what}"))
        except InputError as err:
            raise InputError(f"{where} {printable(path)}: {err}", source="plan") from None
    inputs = study.input_files()
    for index, (path, where, _what) in enumerate(outputs):
        for known, words in inputs.items():
            if same_file(real[index], known):
                raise InputError(f"{where} {printable(path)} is {words}; expected an output path "
                                 "that is none of the study's inputs", source="plan")
        for other_index, (_, other_where, _) in enumerate(outputs[:index]):
            if same_file(real[index], real[other_index]) and not is_char_device(path):
                raise InputError(f"{where} and {other_where} are the same file "
                                 f"{printable(path)}; expected two different outputs", source="plan")
    for path, _, what in outputs:
        prepare_target(path, what=what)
    return workbook, json_target


def _as_file(path: Path, text: str, study) -> Path:
    """A folder (trailing separator or existing folder) becomes <folder>/<study>.xlsx."""
    if text.endswith(("/", os.sep)) or _is_dir(path):
        return path / f"{study.stem}.xlsx"
    return path


def _is_dir(path: Path) -> bool:
    try:
        return os.path.isdir(path)
    except ValueError:  # a NUL in the name: the resolver says so
        return False


def write_outputs(plan, workbook: Path, json_target) -> None:
    """Write the workbook and the JSON as a pair (planner.fileio.OutputBatch): both new
    or, if anything fails, both as they were. JSON for standard output (``-``) is written
    before the files are renamed; it cannot be taken back."""
    from planner.report import build_workbook, plan_to_json_text

    with OutputBatch() as batch:
        batch.add(workbook, build_workbook(plan).save, what="plan workbook")
        if json_target is not None:
            text = plan_to_json_text(plan)
            if json_target == "-":
                _write_stdout(text)
            else:
                batch.add(json_target, text.encode("utf-8"), what="plan JSON")
        batch.commit()


def _write_stdout(text: str) -> None:
    try:
        sys.stdout.write(text)
        sys.stdout.flush()
    except OutputError:
        raise
    except (OSError, AttributeError) as err:  # AttributeError: no stream at all
        reason = getattr(err, "strerror", None) or "it is closed"
        raise OutputError(f"could not write the plan JSON: {reason}",
                          source="standard output") from None


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
                    self.bar.label = printable(label)  # a site id may hold control characters
                self.bar.update(step)
        return advance

    def __exit__(self, *exc):
        if self.bar is not None:
            self.bar.__exit__(*exc)
        return False


#: Sites not served listed one per line on the console; beyond it, a count.
MAX_UNSERVED_LINES = 10


def _attention_lines(plan, currency) -> list[str]:
    """The needs-attention groups, first on the console: count, cost, fix, a few cases."""
    from planner.plan.attention import attention_of

    groups = [g for g in attention_of(plan).get("groups") or [] if isinstance(g, dict)]
    if not groups:
        return ["  needs attention: nothing (every site served, none likely to fail before its visit)"]
    lines = ["  needs attention (every case on the workbook's Needs attention sheet):"]
    for group in groups:
        count = group.get("count", 0)
        noun = "trip" if group.get("cause") == "heavy_trip" else "site"
        noun += "" if count == 1 else "s"
        cost = group.get("cost")
        money = (f"; {group.get('cost_meaning')} {cost:,.0f} {currency}".rstrip()
                 if isinstance(cost, int | float) and math.isfinite(cost) else "")
        lines.append(f"    {printable(group.get('title'))}: {count:,} {noun}{printable(money)}")
        lines.append(f"      fix: {printable(group.get('fix'))}")
        shown = group.get("examples", 3)
        items = group.get("items") or []
        for item in items[:shown]:
            lines.append(f"      {printable(item.get('id'))}: {printable(item.get('detail'))}")
        if shown and len(items) > shown:
            lines.append(f"      ... and {len(items) - shown:,} more")
    return lines


def _climate_lines(sites) -> list[str]:
    """Warnings about where a site's climate comes from (far station, altitude, normals)."""
    found = [(site["id"], w) for site in sites
             for w in ((site.get("site_climate") or {}).get("warnings") or [])]
    lines = [f"  CLIMATE {printable(site_id)}: {printable(w)}"
             for site_id, w in found[:MAX_UNSERVED_LINES]]
    if len(found) > MAX_UNSERVED_LINES:
        lines.append(f"  ... and {len(found) - MAX_UNSERVED_LINES:,} more climate warnings "
                     "(all listed on the workbook's Cautions sheet)")
    return lines


def _summary(plan, out) -> str:
    from planner.report.wording import (
        chemistry_names,
        comparison_label,
        coverage_text,
        downtime_share,
        drivers_text,
        plan_status_text,
    )

    currency = printable(plan["study"]["currency"])
    total = plan["total_present_cost"]
    total_text = (f"{total:,.0f} {currency}" if total is not None and math.isfinite(total)
                  else "none (no feasible plan)")
    n_sites = len(plan["sites"])
    names = chemistry_names(plan)
    lines = [
        f"Plan for {printable(plan['study']['name'])}: {n_sites} sites, "
        f"{plan['study']['horizon_years']} years",
        *_attention_lines(plan, currency),
        f"  total present cost: {total_text} ({plan_status_text(plan)})",
        "  fleet cost with each chemistry wherever it can serve (other sites keep their best design):",
    ]
    for row in plan.get("chemistry_comparison", []):
        served = row.get("sites_served") or 0
        cost = (f"{row['total_with_others_present_cost']:,.0f} {currency}, " if served else "")
        lines.append(f"    {printable(comparison_label(row, names))}: {cost}"
                     f"{printable(coverage_text(row, n_sites, names))}")
        share = downtime_share(row)
        if served and share is not None:
            lines.append(f"      equipment {row['equipment']:,.0f}, trips and labour "
                         f"{row['trips_and_labour']:,.0f}, days off air {row['downtime']:,.0f} "
                         f"({share:.0%}), expected failure cost {row['failure_risk']:,.0f}")
        drivers = drivers_text(row, currency)
        if served and drivers:
            lines.append(f"      most of the difference to the plan: {printable(drivers)}")
    short = [(site, w) for site in plan["sites"] for w in site.get("warnings") or []
             if str(w).startswith(SHORTFALL_CAUSE)]
    for site, warning in short[:MAX_UNSERVED_LINES]:
        lines.append(f"  CHARGING SHORT {printable(site['id'])}: {printable(warning)}")
    if len(short) > MAX_UNSERVED_LINES:
        lines.append(f"  ... and {len(short) - MAX_UNSERVED_LINES:,} more sites whose charging source is "
                     "too small (all on the workbook's Needs attention sheet)")
    lines += _climate_lines(plan["sites"])
    unserved = plan.get("unserved_sites", [])
    for item in unserved[:MAX_UNSERVED_LINES]:
        lines.append(f"  NOT SERVED {printable(item['id'])}: {printable(item['reason'])}")
    if len(unserved) > MAX_UNSERVED_LINES:
        lines.append(f"  ... and {len(unserved) - MAX_UNSERVED_LINES:,} more sites no design can serve "
                     "(all on the workbook's Needs attention sheet)")
    lines += _field_lines(plan, currency)
    lines.append(f"  workbook: {printable(out)}")
    return "\n".join(lines)


def _field_lines(plan, currency) -> list[str]:
    """What the field records changed and where one more test pays (sheet Field evidence)."""
    data = plan.get("field_data") or {}
    lines = []
    priced = [s for s in plan["sites"] if (s.get("field_evidence") or {}).get("factor_p50") is not None]
    if priced:
        own = sum(1 for s in priced if s["field_evidence"].get("records_used"))
        lines.append(f"  field records: {len(priced)} packs in service priced by them ({own} with "
                     "records of their own)")
    ranked = data.get("test_value") or []
    worth = [r for r in ranked if (r.get("net_value") or 0) > 0]
    if ranked:
        best = ranked[0]
        lines.append(f"  one more capacity test pays at {len(worth)} of {len(ranked)} packs in service; "
                     f"best {printable(best['site_id'])}: net {best['net_value']:,.0f} {currency}")
    for site_id in data.get("visits_recommended") or []:
        lines.append(f"  VISIT RECOMMENDED {printable(site_id)}: a failed cell in the pack in service")
    return lines
