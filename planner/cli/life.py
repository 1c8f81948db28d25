"""``planner life``: how long a battery lasts at a temperature or in a site's climate."""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

import click
import numpy as np

from planner import HOURS_PER_YEAR
from planner.aging.profiles import cycling_profile
from planner.cli.params import Number
from planner.cli.terminal import emit_json
from planner.errors import InputError

DAYS_PER_YEAR = 365
#: Largest pack Monte Carlo the command runs: cells in series x draws. Memory and time
#: grow with the product (about 100 bytes and 2 microseconds per cell draw here, measured
#: with 1,000 cells: 0.25 GiB at 1 million); 1,000 cells at 5,000 draws, or 50 cells at
#: 100,000, stay near half a gibibyte.
MAX_CELL_DRAWS = 5_000_000


def _temperature(temp_c, climate, enclosure):
    if temp_c is not None:
        return np.full(HOURS_PER_YEAR, float(temp_c)), f"constant {temp_c:g} °C"
    from planner.climate import load_climate
    from planner.thermal.battery import battery_temperature

    year = load_climate(climate)
    thermal = battery_temperature(year, enclosure)
    return np.asarray(thermal.temp_battery_c, dtype=float), f"{climate} in {enclosure}"


def _print_list():
    from planner.chemistry import all_chemistries

    for chem in all_chemistries():
        settings = ", ".join(f"{v:.2f}" for v in chem.charge_voltages_v_per_cell)
        click.echo(f"{chem.id:8s} {chem.name}")
        click.echo(f"         charge voltages [V/cell]: {settings} "
                   f"(default {chem.default_charge_voltage_v_per_cell:.2f})")
        lives = ", ".join(f"{key} {value:g}" for key, value in chem.components.items())
        click.echo(f"         component lives in plans (planner.pack.components): {lives}")
        for name, params in chem.aging_sets.items():
            mark = "default" if name == chem.default_aging_set else "alternative"
            click.echo(f"         aging set {name} ({mark}): {params.description}")
            env = params.envelope
            if env is not None:
                click.echo(f"           fitted on: calendar {env.calendar_temp_c[0]:g} to "
                           f"{env.calendar_temp_c[1]:g} °C, cycling {env.cycle_temp_c[0]:g} to "
                           f"{env.cycle_temp_c[1]:g} °C at {env.c_rate[0]:g}-{env.c_rate[1]:g} C, "
                           f"tests up to {env.test_years:g} years ({env.source})")
        for key, text in chem.sources.items():
            if not key.startswith("aging."):
                click.echo(f"           {key}: {text}")
        for key, text in chem.sources.items():
            if key.startswith(f"aging.{chem.default_aging_set}."):
                click.echo(f"           {key}: {text}")


@click.command("life", context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--chemistry", "chem_id", default=None, metavar="ID",
              help="Chemistry id: vrla, lfp, nmc, lto or lisocl2 (see --list).")
@click.option("--temp-c", "temp_c", type=Number(minimum=-60.0, maximum=90.0), default=None,
              help="Constant battery temperature, °C.")
@click.option("--climate", "climate", default=None, metavar="SOURCE",
              help="Bundled climate name or weather file (see 'planner climate --list').")
@click.option("--enclosure", "enclosure", default="cabinet-sun", show_default=True,
              type=click.Choice(("cabinet-sun", "cabinet-shade", "vault", "shelter")),
              help="Enclosure kind, with --climate.")
@click.option("--soc-frac", "soc_frac", type=Number(minimum=0.0, maximum=1.0), default=None,
              help="Storage state of charge, fraction of rated capacity (default: full at "
                   "the charge voltage). Used when not cycling.")
@click.option("--charge-voltage-v-per-cell", "--charge-voltage-v", "charge_voltage_v",
              type=Number(exclusive_minimum=True, minimum=0.0), default=None,
              help="Charge voltage per cell, V (default: the chemistry's default setting). "
                   "--charge-voltage-v is the older name of the same option.")
@click.option("--dod-frac", "dod_frac", type=Number(exclusive_minimum=True, minimum=0.0, maximum=1.0),
              default=None,
              help="Depth of each cycle, fraction of rated capacity (with --cycles-per-day).")
@click.option("--cycles-per-day", "cycles_per_day", type=Number(exclusive_minimum=True, minimum=0.0,
              maximum=12.0), default=None,
              help="Cycles per day (with --dod-frac), at most 12.")
@click.option("--c-rate", "c_rate", type=Number(exclusive_minimum=True, minimum=0.0, maximum=10.0),
              default=0.2, show_default=True,
              help="Discharge and charge C-rate of the cycles (for primary cells: the "
                   "constant load as a C-rate).")
@click.option("--eol-soh-frac", "--eol-soh", "eol_soh",
              type=Number(exclusive_minimum=True, minimum=0.0, maximum=0.999), default=0.8, show_default=True,
              help="End of life: state of health (remaining/rated capacity) fraction. --eol-soh is "
                   "the older name of the same option.")
@click.option("--years", "years", type=Number(minimum=1, maximum=200, integer=True), default=40,
              show_default=True,
              help="Horizon in years.")
@click.option("--series-cells", "series_cells", type=Number(minimum=1, maximum=1000, integer=True),
              default=None,
              help="Cells in series in the pack: adds a Monte Carlo over cell-to-cell spread "
                   "and the P10/P50/P90 life (default 1 when another pack option is given).")
@click.option("--cell-spread-frac", "cell_spread_frac", type=Number(minimum=0.0, maximum=0.3),
              default=None,
              help="Coefficient of variation of the cells' initial capacity (default: one "
                   "production lot, see docs/pack.md).")
@click.option("--balancing", "balancing", type=click.Choice(("none", "passive", "active")),
              default=None, help="Cell balancing of the pack (default passive).")
@click.option("--draws", "draws", type=Number(minimum=10, maximum=100000, integer=True),
              default=None,
              help="Monte Carlo draws (default 1000; 4000 without balancing or with a cell "
                   "spread of 2 % or more, where 1000 draws do not hold the median to 2 %).")
@click.option("--across-models", "across_models", is_flag=True,
              help="Spread the draws over every published aging parameter set of the "
                   "chemistry, so model disagreement widens the P10-P90 band.")
@click.option("--aging-set", "aging_set", default=None, metavar="ID",
              help="Aging parameter set of the chemistry (default: its default set; see --list).")
@click.option("--json", "as_json", is_flag=True, help="Print the result as JSON on stdout.")
@click.option("--json-out", "json_out", type=str, default=None, metavar="PATH",
              help="Write the result as JSON to PATH ('-' for standard output), as in "
                   "'planner plan --json-out'.")
@click.option("--list", "list_only", is_flag=True, help="List chemistries and their sources.")
def life_command(chem_id, temp_c, climate, enclosure, soc_frac, charge_voltage_v, dod_frac,
                 cycles_per_day, c_rate, eol_soh, years, series_cells, cell_spread_frac,
                 balancing, draws, across_models, aging_set, as_json, json_out, list_only):
    """Predict the life of a battery stored or cycled at a temperature or in a climate.

    Without --dod-frac/--cycles-per-day the pack is stored (float) at --soc-frac.
    --charge-voltage-v-per-cell is per cell (e.g. 4.10 for NMC, 3.45 for LFP, 2.40 for
    VRLA); primary cells are not charged and take none.

    \b
    Examples:
      planner life --list
      planner life --chemistry lfp --temp-c 25
      planner life --chemistry lfp --temp-c 5 --aging-set naumann
      planner life --chemistry nmc --temp-c 25 --charge-voltage-v-per-cell 4.1 --dod-frac 0.8 --cycles-per-day 1 --json
      planner life --chemistry vrla --climate hot-desert --enclosure cabinet-sun
      planner life --chemistry lfp --temp-c 35 --series-cells 16 --balancing passive --json
    """
    if list_only:
        _print_list()
        return
    from planner.aging import age_lanes
    from planner.chemistry import get_chemistry

    if chem_id is None:
        raise InputError("missing --chemistry; expected one of vrla, lfp, nmc, lto, lisocl2",
                         source="life")
    chem = get_chemistry(chem_id)
    params = chem.aging_set(aging_set)
    _check_options(chem, temp_c, climate, dod_frac, cycles_per_day, eol_soh, years, c_rate,
                   charge_voltage_v)
    volts = chem.default_charge_voltage_v_per_cell if charge_voltage_v is None else charge_voltage_v
    duty = _duty(chem, volts, temp_c, soc_frac, dod_frac, cycles_per_day, c_rate)
    temp, temp_text = _temperature(temp_c, climate, enclosure)
    result = age_lanes(chem, temp[:, None], duty.soc[:, None], duty.current[:, None], volts, years,
                       peak_c_rate=duty.peak_c_rate, charge_c_rate=duty.peak_c_rate,
                       aging_set=params.name)
    out = _life_fields(chem, params, result, duty, temp, temp_text, volts, eol_soh, c_rate)
    pack_options = (series_cells, cell_spread_frac, balancing, draws)
    if any(option is not None for option in pack_options) or across_models:
        model_sets = None
        if across_models:
            model_sets = [age_lanes(chem, temp[:, None], duty.soc[:, None], duty.current[:, None],
                                    volts, years, peak_c_rate=duty.peak_c_rate,
                                    charge_c_rate=duty.peak_c_rate, aging_set=name)
                          for name in chem.aging_sets]
        out.update(_pack_percentiles(chem, result, out["eol_soh_applied"], float(temp.mean()),
                                     *pack_options, model_sets=model_sets))
        for p in ("p10", "p50", "p90"):  # the plan's names beside years_to_eol_pNN
            if f"years_to_eol_{p}" in out:
                out[f"life_{p}_years"] = out[f"years_to_eol_{p}"]
    if duty.cycling:
        reached = out["years_to_eol"] is not None
        out["cycles_to_eol"] = (out["years_to_eol"] * DAYS_PER_YEAR * cycles_per_day
                                if reached else None)
        out["dod_frac"] = dod_frac
        out["cycles_per_day"] = cycles_per_day
        out["c_rate"] = c_rate
    else:
        out["soc_frac"] = float(duty.soc[0])
    if emit_json(json.dumps(out, indent=2), as_json=as_json, json_out=json_out, what="life JSON"):
        return
    click.echo("\n".join(_summary_lines(chem, params, out, years)))


@dataclass(frozen=True)
class _Profile:
    """The synthetic year a pack is aged with: hourly SOC and current (+ discharge)."""

    soc: np.ndarray
    current: np.ndarray
    cycling: bool
    peak_c_rate: float | None   # the cycles' nominal C-rate (also their charge rate)
    top_frac: float             # usable fraction at the charge voltage


def _check_options(chem, temp_c, climate, dod_frac, cycles_per_day, eol_soh, years, c_rate,
                   charge_voltage_v) -> None:
    """Options that cannot go together, or lie outside what the models take."""
    if (temp_c is None) == (climate is None):
        raise InputError("give exactly one of --temp-c T or --climate SOURCE", source="life")
    if temp_c is not None and not -60.0 <= temp_c <= 90.0:
        raise InputError(f"--temp-c is {temp_c:g}; expected -60 to 90 °C", source="life")
    if (dod_frac is None) != (cycles_per_day is None):
        raise InputError("--dod-frac and --cycles-per-day go together; give both or neither",
                         source="life")
    if not 0.0 < eol_soh < 1.0:
        raise InputError(f"--eol-soh-frac is {eol_soh:g}; expected a fraction between 0 and 1",
                         source="life")
    if not 1 <= years <= 200:
        raise InputError(f"--years is {years}; expected 1 to 200", source="life")
    if not c_rate > 0.0 or c_rate > 10.0:
        raise InputError(f"--c-rate is {c_rate:g}; expected more than 0 and at most 10",
                         source="life")
    if charge_voltage_v is not None and not chem.rechargeable:
        raise InputError(f"--charge-voltage-v-per-cell is {charge_voltage_v:g}; {chem.id} is not "
                         "rechargeable: expected no charge voltage", source="life")
    volts = chem.default_charge_voltage_v_per_cell if charge_voltage_v is None else charge_voltage_v
    low, high = chem.usable_table_v[0], chem.usable_table_v[-1]
    if not low - 1e-9 <= volts <= high + 1e-9:
        raise InputError(f"--charge-voltage-v-per-cell is {volts:g} V per cell; expected {low:g} to "
                         f"{high:g} V per cell for {chem.id}", source="life")


def _duty(chem, volts, temp_c, soc_frac, dod_frac, cycles_per_day, c_rate) -> _Profile:
    """Regular cycling (with --dod-frac/--cycles-per-day) or storage at one SOC."""
    top = float(chem.usable_fraction(volts))
    if dod_frac is not None:
        if not chem.rechargeable:
            raise InputError(f"{chem.id} is not rechargeable; drop --dod-frac/--cycles-per-day "
                             "and give the load as --c-rate", source="life")
        if not 0.0 < dod_frac <= top:
            raise InputError(f"--dod-frac is {dod_frac:g}; expected more than 0 and at most "
                             f"{top:g} (usable fraction at {volts:g} V per cell)", source="life")
        ramp_h = max(1, math.ceil(dod_frac / c_rate - 1e-9))
        max_per_day = 24.0 / (2 * ramp_h)
        if not 0.0 < cycles_per_day <= max_per_day:
            raise InputError(f"--cycles-per-day is {cycles_per_day:g}; expected more than 0 and "
                             f"at most {max_per_day:g} at this depth and C-rate", source="life")
        if temp_c is not None:
            _refuse_blocked_charging(chem, temp_c)
        soc, current = cycling_profile(top, dod_frac, cycles_per_day, c_rate)
        return _Profile(soc, current, True, c_rate, top)
    stored = top if soc_frac is None else soc_frac
    if not 0.0 <= stored <= top + 1e-9:
        raise InputError(f"--soc-frac is {stored:g}; expected 0 to {top:g} (usable fraction "
                         f"at {volts:g} V per cell)", source="life")
    # A primary cell feeds its load (--c-rate given explicitly); a stored pack carries none.
    load = c_rate if not chem.rechargeable and _given("c_rate") else 0.0
    return _Profile(np.full(HOURS_PER_YEAR, stored), np.full(HOURS_PER_YEAR, load), False, None,
                    top)


def _life_fields(chem, params, result, duty: _Profile, temp, temp_text, volts, eol_soh,
                 c_rate) -> dict:
    """The JSON fields of one life: end of life, losses, extrapolation, blocked charging."""
    from planner.aging.envelope import extrapolation_notes

    # The knee-free laws are not carried below the lowest state of health their tests
    # reached (aging set envelope): a lower --eol-soh is raised to it and said.
    floor = params.envelope.lowest_soh_frac if params.envelope is not None else None
    applied = max(eol_soh, floor) if floor is not None else eol_soh
    eol_years, cal, cyc = (float(v[0]) for v in result.end_of_life(applied))
    reached = math.isfinite(eol_years)
    out = {
        "chemistry": chem.id,
        "chemistry_name": chem.name,
        "rechargeable": chem.rechargeable,
        "aging_set": result.aging_set,
        "battery_temperature": temp_text,
        "battery_mean_temp_c": round(float(temp.mean()), 3),
        # for primary cells the nominal voltage: they are not charged
        "charge_voltage_v_per_cell": volts,
        "usable_fraction": duty.top_frac,
        "eol_soh": eol_soh,
        "eol_soh_frac": eol_soh,  # the plan's name for eol_soh
        "eol_soh_applied": applied,
        "life_knee_floor": applied > eol_soh,
        "years_to_eol": eol_years if reached else None,
        "life_years": eol_years if reached else None,  # the plan's name for years_to_eol
        "calendar_loss_frac": cal,
        "cycle_loss_frac": cyc,
        "equivalent_full_cycles_per_year": float(result.efc_per_year[0]),
        "soh_by_year": [float(v) for v in result.soh_monthly[::12, 0]],
    }
    notes = extrapolation_notes(
        params.envelope, mean_temp_c=float(temp.mean()),
        life_years=eol_years if reached else math.inf,
        efc_per_year=float(result.efc_per_year[0]), c_rate=c_rate if duty.cycling else None,
        soc_frac=None if duty.cycling else float(duty.soc[0]))
    out["life_extrapolated"] = bool(notes)
    out["extrapolation_notes"] = notes
    if duty.cycling:
        cold, hot = _blocked_charging_hours(chem, temp, duty.current)
        out["charge_blocked_hours_per_year"] = cold + hot
        out["charge_blocked_cold_hours_per_year"] = cold
        out["charge_blocked_hot_hours_per_year"] = hot
    return out


def _summary_lines(chem, params, out: dict, years: int) -> list[str]:
    """What ``planner life`` prints on a terminal."""
    volts, applied, eol_soh = out["charge_voltage_v_per_cell"], out["eol_soh_applied"], out["eol_soh"]
    lines = [f"{chem.name}, aging set {out['aging_set']}",
             f"battery temperature: {out['battery_temperature']} "
             f"(mean {out['battery_mean_temp_c']:.1f} °C)"]
    if chem.rechargeable:
        lines.append(f"charge voltage {volts:.2f} V per cell, usable fraction "
                     f"{out['usable_fraction']:.2f}")
    else:
        lines.append(f"nominal voltage {volts:.2f} V per cell (primary cells are not charged)")
    if applied > eol_soh:
        lines.append(f"end of life raised from {eol_soh:.0%} to {applied:.0%} SOH: the tests "
                     f"behind aging set {params.name} end there, and the laws have no knee below it")
    if out["years_to_eol"] is not None:
        extra = f", {out['cycles_to_eol']:.0f} cycles" if "cycles_to_eol" in out else ""
        lines.append(f"reaches {applied:.0%} SOH after {out['years_to_eol']:.1f} years{extra}")
    else:
        lines.append(f"stays above {applied:.0%} SOH for the {years} years computed")
    cal, cyc = out["calendar_loss_frac"], out["cycle_loss_frac"]
    if chem.rechargeable:
        lines.append(f"loss then: calendar {cal:.1%}, cycling {cyc:.1%}")
    else:
        lines.append(f"capacity gone then: self-discharge {cal:.1%}, drawn by the load {cyc:.1%}")
    lines += [f"extrapolated: {note}" for note in out["extrapolation_notes"]]
    cold = out.get("charge_blocked_cold_hours_per_year", 0)
    hot = out.get("charge_blocked_hot_hours_per_year", 0)
    if cold + hot > 0:
        lines.append(f"charging blocked: {cold:.0f} h of the profile's charging hours fall "
                     f"below {chem.charge_temp_min_c:g} °C and {hot:.0f} h above "
                     f"{chem.charge_temp_max_c:g} °C; a plan does not charge then (planner plan), "
                     "the cycles above still count them")
    if "years_to_eol_p50" in out:
        def shown(value):
            return f"{value:.1f}" if value is not None else f">{years}"
        lines.append(f"pack of {out['series_cells']} cells in series, {out['balancing']} "
                     f"balancing, {out['draws']} draws: P10 {shown(out['years_to_eol_p10'])}, "
                     f"P50 {shown(out['years_to_eol_p50'])}, P90 {shown(out['years_to_eol_p90'])} "
                     "years")
    return lines


def _refuse_blocked_charging(chem, temp_c: float) -> None:
    """Cycling at a constant temperature outside the chemistry's charge window would
    report a life the battery management system never lets the pack reach: refuse it."""
    if temp_c < chem.charge_temp_min_c:
        why = f"below {chem.charge_temp_min_c:g} °C (lithium plating)" if chem.id != "vrla" \
            else f"below {chem.charge_temp_min_c:g} °C"
    elif temp_c > chem.charge_temp_max_c:
        why = f"above {chem.charge_temp_max_c:g} °C (the charge over-temperature stop)"
    else:
        return
    raise InputError(f"charging {chem.id} is blocked {why}, as in plans: a pack cycled at "
                     f"{temp_c:g} °C is never recharged; give --temp-c from "
                     f"{chem.charge_temp_min_c:g} to {chem.charge_temp_max_c:g} or drop "
                     "--dod-frac/--cycles-per-day to store it", source="life")


def _blocked_charging_hours(chem, temp, current) -> tuple[float, float]:
    """Charging hours of the profile below and above the charge window (cold, hot)."""
    charging = current < 0.0
    return (float(np.count_nonzero(charging & (temp < chem.charge_temp_min_c))),
            float(np.count_nonzero(charging & (temp > chem.charge_temp_max_c))))


def _pack_percentiles(chem, result, eol_soh, mean_temp_c, series_cells, cell_spread_frac,
                      balancing, draws, *, model_sets=None) -> dict:
    """P10/P50/P90 years to end of life of a series string (pack Monte Carlo)."""
    from planner.pack.spread import DEFAULT_DRAWS, life_summary
    from planner.pack.structure import stress_parameters

    series_cells = 1 if series_cells is None else series_cells
    if not 1 <= series_cells <= 1000:
        raise InputError(f"--series-cells is {series_cells}; expected 1 to 1000", source="life")
    if draws is None:
        # Seed stability measured in docs/pack.md: P50 within 2 % at 1000 draws for one lot
        # with balancing, but only at about 4000 without balancing or with mixed lots.
        wide = balancing == "none" or (cell_spread_frac or 0.0) >= 0.02 or model_sets
        draws = 4 * DEFAULT_DRAWS if wide else DEFAULT_DRAWS
    if not 10 <= draws <= 100000:
        raise InputError(f"--draws is {draws}; expected 10 to 100000", source="life")
    if series_cells * draws > MAX_CELL_DRAWS:
        raise InputError(f"--series-cells {series_cells} x --draws {draws} is "
                         f"{series_cells * draws:,} cell draws; expected at most "
                         f"{MAX_CELL_DRAWS:,} (memory grows with the product: fewer draws or "
                         "cells)", source="life")
    options = {"series_cells": series_cells, "balancing": balancing or "passive", "draws": draws,
               "eol_soh_frac": eol_soh, "seed": 0, "reference_temp_c": mean_temp_c}
    if cell_spread_frac is not None:
        if not 0.0 <= cell_spread_frac <= 0.3:
            raise InputError(f"--cell-spread-frac is {cell_spread_frac:g}; expected 0 to 0.3",
                             source="life")
        options["cell_spread_frac"] = cell_spread_frac
    options.update(stress_parameters(chem.aging_sets[result.aging_set]))
    if model_sets:
        options["model_sets"] = model_sets
    rows, dist = life_summary(result, prefix="years_to_eol", **options)
    return {**rows[0], "series_cells": series_cells, "balancing": options["balancing"],
            "draws": dist.draws, "pack_notes": list(dist.notes)}


def _given(name: str) -> bool:
    """Whether an option was given on the command line (not its default)."""
    ctx = click.get_current_context()
    source = ctx.get_parameter_source(name)
    return source is not None and source.name == "COMMANDLINE"
