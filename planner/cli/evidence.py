"""``planner evidence STUDY [--site ID]``: what a site's field records say, in the terminal.

Runs the packs in service of the sites with records (no plan), fits the fleet model and
prints either one line per site or one site in full: each record as read and corrected to
25 °C, the battery log's verdict, the posterior fade factor, remaining life and end-of-life
year against the prediction without records, and the state of health by age (measured
points beside the posterior band).
"""

from __future__ import annotations

import json
import math

import click

from planner.errors import InputError


def _f(value, fmt: str = ".2f") -> str:
    return format(value, fmt) if value is not None and math.isfinite(value) else "-"


@click.command("evidence", context_settings={"help_option_names": ["-h", "--help"]})
@click.argument("study_file", type=click.Path(dir_okay=False))
@click.option("--site", "site_id", default=None, metavar="ID", help="Show this site in full.")
@click.option("--json", "as_json", is_flag=True, help="Print JSON (the plan's field_evidence keys).")
def evidence_command(study_file, site_id, as_json):
    """Show what the capacity tests and battery logs of a study ([field_data]) say about
    its packs in service: fade factor, remaining life and end-of-life year, per site.

    \b
    Examples:
      planner evidence scenarios/corvale.toml
      planner evidence scenarios/corvale.toml --site SD-02
    """
    from planner.pipeline import evidence_only
    from planner.plan.field_evidence import site_field_evidence
    from planner.study.loading import load_study

    study = load_study(study_file)
    if study.field_data is None:
        raise InputError("names no field records; expected [field_data].capacity_tests_file or "
                         "battery_log_file (docs/study-file.md)", source=study_file)
    ids = {s.id: s for s in study.sites}
    if site_id is not None:
        if site_id not in ids:
            from planner.study.schema import closest

            raise InputError(f"--site {site_id}: unknown site{closest(site_id, ids)}; expected an id "
                             "of the sites table", source=study_file)
        if not ids[site_id].has_existing_pack:
            raise InputError(f"--site {site_id}: the site has no pack in service (existing_chemistry "
                             "blank); field records describe packs in service", source=study_file)
    evidence, _ = evidence_only(study, [site_id] if site_id else None)
    start = study.settings["study"]["start_year"]
    horizon = study.settings["study"]["horizon_years"]
    chosen = [site_id] if site_id else [s.id for s in study.sites
                                        if evidence.site(s.id) or s.id in evidence.records_only]
    entries = {i: site_field_evidence(evidence, i, start) for i in chosen}
    if as_json:
        out = {"start_year": start, "skipped_records": list(evidence.skipped),
               "chemistries": {c: h.summary() for c, h in evidence.chemistries.items()},
               "sites": {i: {**(e or {}), **({"band": evidence.site(i).band(horizon)} if site_id and
                                               evidence.site(i) else {})} for i, e in entries.items()}}
        click.echo(json.dumps(out, indent=2, default=float))
        return
    for line in evidence.skipped:
        click.echo(f"skipped: {line}")
    if site_id is None:
        _print_fleet(evidence, entries, start)
    else:
        _print_site(study, evidence, ids[site_id], entries[site_id], start, horizon)


def _print_fleet(evidence, entries, start) -> None:
    for chem, hyper in sorted(evidence.chemistries.items()):
        s = hyper.summary()
        click.echo(f"{chem}: fleet factor P50 {s['fleet_factor_p50']:.2f} (P10 {s['fleet_factor_p10']:.2f}, "
                   f"P90 {s['fleet_factor_p90']:.2f}), spread between sites {s['site_spread_log_sd_p50']:.2f} "
                   f"(log sd), {s['sites_with_records']} sites with records")
    click.echo("")
    click.echo(f"{'site':10s}{'records':>8s}{'factor P10':>12s}{'P50':>6s}{'P90':>6s}"
               f"{'life left P50':>15s}{'predicted':>11s}{'end of life P50':>17s}  flags")
    for site_id, e in entries.items():
        if e is None:
            continue
        flags = "failed cell: visit" if e["visit_recommended"] else ""
        click.echo(f"{site_id:10s}{e['records_used']:>8d}{_f(e['factor_p10']):>12s}{_f(e['factor_p50']):>6s}"
                   f"{_f(e['factor_p90']):>6s}{_f(e['remaining_life_p50_years'], '.1f'):>15s}"
                   f"{_f(e['remaining_life_years_predicted'], '.1f'):>11s}"
                   f"{_f(e['end_of_life_year_p50'], '.1f'):>17s}  {flags}")


def _print_site(study, evidence, site, e, start, horizon) -> None:
    ev = evidence.site(site.id)
    click.echo(f"Site {site.id} ({site.name}): pack in service {site.existing_chemistry}, "
               f"{site.existing_capacity_wh:g} Wh, installed {site.existing_installed_year}")
    if e is None:
        click.echo("No field record for this pack and none for its chemistry: its life is the "
                   "laboratory prediction.")
        return
    if e["tests"]:
        click.echo("")
        click.echo(f"{'row':>5s}  {'test date':10s}  {'kind':11s}{'age [y]':>8s}{'measured':>10s}"
                   f"{'at 25 °C':>10s}  used  note")
        for t in e["tests"]:
            used = "yes" if t["used"] else "no"
            bound = " >=" if t["lower_bound"] else "   "
            click.echo(f"{t['row']:>5d}  {t['test_date']:10s}  {t['kind']:11s}{_f(t['age_years']):>8s}"
                       f"{_f(100 * t['measured_soh_frac'], '.1f'):>9s}%{bound}{_f(100 * t['soh_at_25c_frac'], '.1f'):>6s}%"
                       f"  {used:4s}  {t['note']}")
    if e["log_note"]:
        click.echo(f"Battery log: {e['log_note']}")
    if e["failed_cell"]:
        click.echo(f"Failed cell: {e['failed_cell']}: a visit is recommended; the test is left out of "
                   "the fade factor")
    if ev is None:
        click.echo("Its chemistry has no usable record: its life is the laboratory prediction.")
        return
    click.echo("")
    hyper = evidence.chemistries[ev.chemistry].summary()
    click.echo(f"Fade factor (measured over predicted fade): P10 {_f(e['factor_p10'])}  P50 "
               f"{_f(e['factor_p50'])}  P90 {_f(e['factor_p90'])}   (fleet {ev.chemistry}: P50 "
               f"{hyper['fleet_factor_p50']:.2f}, {hyper['sites_with_records']} sites with records)")
    click.echo(f"Initial capacity: {_f(100 * e['initial_capacity_p50_frac'], '.1f')} % of rated (P50)")
    click.echo(f"Remaining life from {start}: P10 {_f(e['remaining_life_p10_years'], '.1f')}  P50 "
               f"{_f(e['remaining_life_p50_years'], '.1f')}  P90 {_f(e['remaining_life_p90_years'], '.1f')} "
               f"years (predicted without records: {_f(e['remaining_life_years_predicted'], '.1f')})")
    click.echo(f"End of life: P10 {_f(e['end_of_life_year_p10'], '.1f')}  P50 "
               f"{_f(e['end_of_life_year_p50'], '.1f')}  P90 {_f(e['end_of_life_year_p90'], '.1f')}; "
               f"the plan replaces it within {_f(e['replace_by_years'], '.1f')} years")
    band = ev.band(horizon)
    measured = [(a, y) for a, y, w in zip(ev.records.observations.age_years, ev.records.observations.soh_frac,
                                          ev.records.observations.offset_weight) if w > 0]
    click.echo("")
    click.echo(f"{'age [y]':>8s}{'measured':>10s}{'P10':>8s}{'P50':>8s}{'P90':>8s}{'predicted':>11s}")
    for k, age in enumerate(band["age_years"]):
        if abs(age - round(age)) > 1e-9:
            continue  # whole years in the terminal; the JSON holds every half year
        near = [y for a, y in measured if round(a) == round(age)]
        shown = f"{100 * near[-1]:.1f}%" if near else ""
        click.echo(f"{age:8.0f}{shown:>10s}{100 * band['soh_p10'][k]:7.1f}%{100 * band['soh_p50'][k]:7.1f}%"
                   f"{100 * band['soh_p90'][k]:7.1f}%{100 * band['soh_predicted'][k]:10.1f}%")
