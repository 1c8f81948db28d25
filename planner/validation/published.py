"""Validation report: calibration rows shown, independent validation rows counted.

``python -m planner.validation`` evaluates the planner's laws and engine at the condition
of every reference row (:mod:`planner.validation.references`), compares each prediction
with its two-sided band and writes ``docs/validation.md`` in three parts: the validation
rows (independent data the fits never saw), the calibration rows (what each set was
fitted to: shown, not counted) and the standards' worked examples. A last section perturbs
each default set's key parameters (activation energies by +-30 %, the cold activation
energy x2, the sign of an activation energy, the throughput exponent by +-20 %) and lists
which validation rows each perturbation fails. The exit code is 1 when a row fails.

Usage::

    python -m planner.validation [--out docs/validation.md]
"""

from __future__ import annotations

import argparse
import math
import re
from dataclasses import dataclass, replace
from pathlib import Path
from types import MappingProxyType

import numpy as np

from planner.validation import predictions as pred
from planner.validation.references import (
    DEFAULT_SETS,
    DEPARTURES,
    FITTED_TARGETS,
    KNOWN_GAPS,
    LFP,
    LTO,
    NMC,
    NMC_WARRANTY,
    NO_INDEPENDENT_DATA,
    REFERENCES,
    VRLA,
    Reference,
)

R_GAS = 8.314462618


# ------------------------------------------------------------------ predictions
def _lfp(key, chem_of):
    from planner.aging import calendar as cal

    lfp = chem_of("lfp")
    if key == "naumann2018/calendar-model/25C-soc50-1y":
        return pred.storage_loss(lfp, 25.0, 0.5)
    if key == "naumann2018/calendar-model/25C-soc100-1y":
        return pred.storage_loss(lfp, 25.0, 1.0)
    if key == "naumann2020/cycle-model/1C-doc100-1000fec":
        from planner.aging import cycle as cyc
        return float(cyc.naumann2020_cycle_loss(1.0, 1.0, 1000.0, **lfp.aging.cycle))
    if key in ("wang2011/eq5/c2-life-ratio-45C-over-25C",
               "swierczynski2015/calendar-model/life-ratio-45C-over-25C"):
        soc = 1.0 if key.startswith("wang") else 0.5
        return (pred.storage_years(lfp, 25.0, soc, years=pred.LONG_YEARS)
                / pred.storage_years(lfp, 45.0, soc, years=pred.LONG_YEARS))
    if key == "schimpe2018/table4/plating-share-1C-25C":
        result = pred.cycling(lfp, 25.0, dod=1.0, c_rate=1.0, years=5)
        return float(result.plating_loss_frac[-1, 0] / result.cycle_loss_frac[-1, 0])
    if key == "schimpe2018/table4/charge-at-0C-over-25C":
        return _split_charge_ratio(lfp)
    if key == "common-practice/storage/lfp-25C-full":
        return pred.storage_years(lfp, 25.0)
    if key == "common-practice/storage/lfp-45C-full":
        return pred.storage_years(lfp, 45.0)
    if key.startswith("common-practice/storage/life-halves-per-10K"):
        return pred.storage_years(lfp, 25.0) / pred.storage_years(lfp, 35.0)
    if key.startswith("naumann2018/calendar-model/") and key.endswith("-soc100-1y"):
        return _storage_loss_ratio(lfp, key)
    if key == "naumann2018/calendar-model/60C-soc50-1y":
        return pred.storage_loss(lfp, 60.0, 0.5)
    if key == "naumann2018/calendar-model/60C-over-25C-soc50-1y":
        return pred.storage_loss(lfp, 60.0, 0.5) / pred.storage_loss(lfp, 25.0, 0.5)
    if key == "wang2011/eq5/c2-25C-1000ah":
        # 1,000 Ah through a 2.2 Ah cell at C/2, full depth: 455 cycles of 4 h
        result = pred.cycling(lfp, 25.0, dod=1.0, per_day=6.0, c_rate=0.5, years=1)
        return pred.loss_after_hours(result, 1000.0 / 2.2 * 4.0)
    if key == "common-practice/cold-charge-limit/lfp-5C-c5":
        cold = pred.cycling(lfp, 5.0, c_rate=0.2, years=5)
        warm = pred.cycling(lfp, 25.0, c_rate=0.5, years=5)
        return float(cold.cycle_loss_frac[-1, 0] / warm.cycle_loss_frac[-1, 0])
    if key == "wang2011/eq5/c2-25C-20pct-throughput":
        return pred.cycles_to_80(lfp, 25.0, dod=1.0, per_day=6.0, c_rate=0.5, years=10)
    if key == "common-practice/daily-cycling/lfp-25C":
        return float(pred.cycling(lfp, 25.0).years_to_soh(0.8)[0]) * 365.0
    del cal
    raise KeyError(key)


def _storage_loss_ratio(chem, key):
    """Loss of a year stored full at one temperature over that at another, as a key
    ``.../<hot>C-over-<cold>C-soc100-1y`` names them."""
    hot, cold = re.search(r"/(\d+)C-over-(\d+)C-soc100-1y$", key).groups()
    return pred.storage_loss(chem, float(hot), 1.0) / pred.storage_loss(chem, float(cold), 1.0)


def _split_charge_ratio(lfp):
    """Plating loss with the charging hours at 0 °C over at 25 °C (the rest opposite)."""
    from planner.aging import age_lanes
    from planner.aging.profiles import cycling_profile

    soc, current = cycling_profile(1.0, 0.8, 1.0, 0.5)
    out = []
    for charge_c, rest_c in ((0.0, 25.0), (25.0, 0.0)):
        temp = np.where(current < 0.0, charge_c, rest_c)
        result = age_lanes(lfp, temp[:, None], soc[:, None], current[:, None],
                           lfp.default_charge_voltage_v_per_cell, 5, peak_c_rate=0.5,
                           charge_c_rate=0.5)
        out.append(float(result.plating_loss_frac[-1, 0]))
    return out[0] / out[1]


def _nmc(key, chem_of):
    from planner.aging import calendar as cal
    from planner.aging import cycle as cyc

    nmc = chem_of("nmc")
    published = nmc.aging_set("schmalstieg-published")
    if key == "common-practice/stationary-nmc/5000-cycles-80dod":
        from planner.aging import age_lanes
        from planner.aging.profiles import cycling_profile
        soc, current = cycling_profile(1.0, 0.8, 1.0, 0.5)
        # the cycle term alone: the calendar law's level set to nothing
        level = "loss_frac_year_ref" if "loss_frac_year_ref" in nmc.aging.calendar else "scale"
        result = age_lanes(nmc, np.full((pred.H, 1), 25.0), soc[:, None], current[:, None], 4.20,
                           30, peak_c_rate=0.5, charge_c_rate=0.5,
                           overrides={f"calendar.{level}": 0.0})
        return float(result.years_to_soh(0.8)[0]) * 365.0
    warranty_set = NMC_WARRANTY.split("/")[1]
    if key == "common-practice/stationary-nmc/warranty-70pct-10y":
        return float(pred.cycling(nmc, 25.0, years=10, aging_set=warranty_set).soh_monthly[-1, 0])
    if key == "common-practice/stationary-nmc/1500-daily-cycles":
        return pred.cycles_to_80(nmc, 25.0, dod=0.8, per_day=1.0, c_rate=0.5,
                                 aging_set=warranty_set)
    if key == "common-practice/stationary-nmc/daily-cycles-25C-80dod-c2":
        return pred.cycles_to_80(nmc, 25.0, dod=0.8, per_day=1.0, c_rate=0.5)
    if key == "mokidm/abstract/samsung-nmc-35C-75dod":
        return pred.cycles_to_80(nmc, 35.0, dod=0.75, per_day=6.0, c_rate=0.5, years=10)
    if key == "waldmann2014/arrhenius-plot/1C-5C-over-25C":
        cold = pred.cycling(nmc, 5.0, c_rate=1.0, years=1)
        warm = pred.cycling(nmc, 25.0, c_rate=1.0, years=1)
        return float(cold.cycle_loss_frac[-1, 0] / warm.cycle_loss_frac[-1, 0])
    if key == "smith2017/calendar-model/life-ratio-60C-over-25C":
        return pred.storage_years(nmc, 25.0, years=300) / pred.storage_years(nmc, 60.0)
    if key == "smith2017/calendar-model/life-ratio-60C-over-35C":
        return pred.storage_years(nmc, 35.0, years=300) / pred.storage_years(nmc, 60.0)
    if key.startswith("common-practice/storage/life-halves-per-10K"):
        return pred.storage_years(nmc, 25.0) / pred.storage_years(nmc, 35.0)
    if key.startswith("smith2017/calendar-model/") and key.endswith("-soc100-1y"):
        return _storage_loss_ratio(nmc, key)
    if key == "smith2017/calendar-model/life-ratio-5C-over-25C":
        return (pred.storage_years(nmc, 5.0, years=pred.LONG_YEARS)
                / pred.storage_years(nmc, 25.0, years=pred.LONG_YEARS))
    if key.startswith("schmalstieg2014/alpha-cap/"):
        # the default's calendar law is the published one: evaluated with its parameters
        temp = 25.0 if "25C" in key else 35.0
        return 1.0 - float(cal.schmalstieg2014_calendar_loss(4.1, temp, 365.0, **nmc.aging.calendar))
    if key == "schmalstieg2014/beta-cap/3.667V-dod100-1000ah":
        return 1.0 - float(cyc.schmalstieg2014_cycle_loss(3.667, 1.0, 1000.0, **published.cycle))
    if key == "common-practice/consumer-nmc/full-1C-cycles-4.20V":
        return _consumer_cycles(nmc)
    raise KeyError(key)


def _consumer_cycles(nmc):
    from planner.aging import age_lanes

    even = np.arange(pred.H) % 2 == 0
    result = age_lanes(nmc, np.full((pred.H, 1), 25.0), np.where(even, 1.0, 0.0)[:, None],
                       np.where(even, 1.0, -1.0)[:, None], 4.20, 1, peak_c_rate=1.0,
                       aging_set="schmalstieg")
    return float(result.years_to_soh(0.8)[0]) * pred.H / 2.0


def _side_by_side(key, chem_of):
    """The large-format cells of one test matrix: each chemistry alone (stored at a state
    of charge, temperature and duration; cycled daily) or NMC over LFP at one condition, as
    the study reports."""
    lfp, nmc = chem_of("lfp"), chem_of("nmc")
    temp = 45.0 if "45C-" in key else 25.0
    if key == "gasper2023/cycle-models/25C-80dod-c2-daily-lfp":
        return pred.cycles_to_80(lfp, 25.0, dod=0.8, per_day=1.0, c_rate=0.5)
    stored = re.search(r"/soc(\d+)-(\d+)C-([\d.]+)y-(lfp|nmc)$", key)
    if stored:
        soc, temp_c, years, chem_id = stored.groups()
        return pred.storage_loss_at(lfp if chem_id == "lfp" else nmc, float(temp_c),
                                    int(soc) / 100.0, float(years))
    if key.startswith("gasper2023/calendar-models/"):
        return pred.storage_loss(nmc, temp, 1.0) / pred.storage_loss(lfp, temp, 1.0)
    if key.startswith("gasper2023/cycle-models/"):
        # 1,000 cycles of 80 % depth at C/2 (4 h each: 2 h down, 2 h up), back to back
        hours = 1000 * 4.0
        losses = [pred.loss_after_hours(pred.cycling(chem, temp, per_day=6.0, years=1), hours)
                  for chem in (nmc, lfp)]
        return losses[0] / losses[1]
    raise KeyError(key)


def _other(key, chem_of):
    from planner.aging import cycle as cyc

    if key.startswith(("agm-datasheets", "bu806a", "vendor-booklet", "powerstride")):
        vrla = chem_of("vrla")
        if key.startswith("agm-datasheets"):
            depth = 0.5 if key.endswith("50pct") else 0.3
            return float(cyc.woehler_cycles_to_failure(depth, **vrla.aging.cycle))
        if key.startswith("bu806a"):
            return pred.storage_years(vrla, 33.0 if key.endswith("33C") else 41.0)
        if key.startswith("vendor-booklet"):
            return pred.storage_years(vrla, 25.0) / pred.storage_years(vrla, 30.0)
        return float(cyc.woehler_cycles_to_failure(0.5, **vrla.aging.cycle)
                     / cyc.woehler_cycles_to_failure(0.8, **vrla.aging.cycle))
    if key.startswith(("common-practice/lto", "ghost", "bank2020")):
        lto = chem_of("lto")
        if key == "bank2020/fitted-model/45C-dod100-1C-5000efc":
            _, result = pred.continuous_cycles(lto, years=2, temp_c=45.0)
            return pred.loss_after_hours(result, 5000 * 2.0)
        if key == "bank2020/fitted-model/storage-45C-full-1y":
            return pred.storage_loss(lto, 45.0, 1.0)
        if key.startswith("ghost"):
            _, result = pred.continuous_cycles(lto, years=3, dod=0.8)
            return pred.loss_after_hours(result, 9000 * 2.0)
        return pred.continuous_cycles(lto, years=10)[0]
    if key.startswith("vendor/self-discharge"):
        from planner.aging import calendar as cal
        temp = 20.0 if key.endswith("20C") else 70.0
        return float(cal.primary_self_discharge_per_year(temp, **chem_of("lisocl2").aging.calendar))
    return _standard(key)


def _standard(key):
    from planner.aging.rainflow import count_cycles_lanes
    from planner.economics import spv, upv
    from planner.energy import sizing

    if key.startswith("astm-e1049"):
        counted = count_cycles_lanes(np.array([-2, 1, -3, 5, -1, 3, -4, 4, -2], dtype=float))[0]
        if key.endswith("count"):
            return sum(count for _, count in counted)
        return sum(rng * count for rng, count in counted)
    if key == "nist-hb135/app-d/spv-3pct-10y":
        return float(spv(0.03, 10))
    if key == "nist-hb135/app-d/upv-3pct-20y":
        return float(upv(0.03, 20))
    if key == "ieee1013/sizing-chain/worked-example":
        return sizing.reference_capacity(daily_load_wh=960, system_voltage_v=12, autonomy_days=5,
                                         max_dod_frac=0.8, temperature_factor=1.30,
                                         aging_factor=1.25, design_margin=1.10).capacity_ah
    if key == "ieee485/table1/0C":
        return float(sizing.lead_acid_temperature_factor(0.0))
    raise KeyError(key)


def _with_set(chem_of, set_id):
    """``chem_of`` with the chemistry of ``set_id`` ("chemistry/set") aging by that set: a
    row of a set other than the default is evaluated on its own set (a perturbed default
    stays perturbed: the set keeps its name)."""
    chem_id, set_name = set_id.split("/")

    def of(cid):
        chem = chem_of(cid)
        if cid != chem_id or chem.default_aging_set == set_name:
            return chem
        return replace(chem, default_aging_set=set_name)

    return of


def predict(reference: Reference, chem_of) -> float:
    """The planner's prediction at a reference row's condition, with the first aging set
    the row names (the side-by-side rows: both lithium-ion defaults)."""
    sets = reference.sets
    if reference.key.startswith("gasper2023/"):
        # each chemistry by the first set of it the row names
        for set_id in reversed(sets):
            chem_of = _with_set(chem_of, set_id)
        return float(_side_by_side(reference.key, chem_of))
    if sets and sets[0].startswith("lfp/"):
        return float(_lfp(reference.key, _with_set(chem_of, sets[0])))
    if sets and sets[0].startswith("nmc/"):
        return float(_nmc(reference.key, _with_set(chem_of, sets[0])))
    return float(_other(reference.key, chem_of))


# ------------------------------------------------------------------ rows
@dataclass(frozen=True)
class Row:
    """A reference row with the planner's prediction."""

    point: Reference
    predicted: float

    @property
    def passed(self) -> bool:
        low, high = self.point.band
        return math.isfinite(self.predicted) and low <= self.predicted <= high

    @property
    def error_frac(self) -> float | None:
        value = self.point.value
        return None if not value else self.predicted / value - 1.0


def run_validation(chem_of=None, references=REFERENCES) -> list[Row]:
    """Every reference row with the planner's prediction.

    ``chem_of(chem_id)`` returns the chemistry to use (default
    :func:`planner.chemistry.get_chemistry`): the mutation coverage passes a perturbed one.
    """
    from planner.chemistry import get_chemistry

    chem_of = chem_of or get_chemistry
    return [Row(point, predict(point, chem_of)) for point in references]


# ------------------------------------------------------------------ mutations
@dataclass(frozen=True)
class Mutation:
    """A perturbation of one parameter of a default aging set (``key``: one name, or
    several perturbed together where one law spreads a quantity over several, as the NMC
    law's heat sensitivity over its two cells' temperature coefficients)."""

    set_id: str
    what: str
    part: str
    key: str | tuple[str, ...]
    factor: float

    @property
    def keys(self) -> tuple[str, ...]:
        return (self.key,) if isinstance(self.key, str) else tuple(self.key)

    def chem_of(self):
        from planner.chemistry import get_chemistry

        chem_id, set_name = self.set_id.split("/")
        chem = get_chemistry(chem_id)
        params = chem.aging_set(set_name)
        values = dict(getattr(params, self.part))
        for key in self.keys:
            values[key] *= self.factor
        sets = dict(chem.aging_sets)
        sets[set_name] = replace(params, **{self.part: MappingProxyType(values)})
        changed = replace(chem, aging_sets=MappingProxyType(sets))
        return lambda cid: changed if cid == chem_id else get_chemistry(cid)


def _mutations(set_id, calendar_ea, cold_ea=None, low_storage_ea=None, exponent=None,
               exponent_part="cycle", time_law=False):
    out = [Mutation(set_id, "calendar activation energy +30 %", "calendar", calendar_ea, 1.3),
           Mutation(set_id, "calendar activation energy -30 %", "calendar", calendar_ea, 0.7),
           Mutation(set_id, "sign of the calendar activation energy", "calendar", calendar_ea, -1.0)]
    if cold_ea:
        out.append(Mutation(set_id, "cold (plating) activation energy x2", "cycle", cold_ea, 2.0))
    if low_storage_ea:
        out.append(Mutation(set_id, "cold storage activation energy x2", "calendar",
                            low_storage_ea, 2.0))
    if exponent:
        out += [Mutation(set_id, f"{exponent} +20 %", exponent_part, exponent, 1.2),
                Mutation(set_id, f"{exponent} -20 %", exponent_part, exponent, 0.8)]
    if time_law:
        out += [Mutation(set_id, "calendar time exponent +20 %", "calendar", "time_exponent", 1.2),
                Mutation(set_id, "calendar time exponent -20 %", "calendar", "time_exponent", 0.8),
                Mutation(set_id, "storage test length x2 (where the rate is held)", "calendar",
                         "hold_after_years", 2.0)]
    return out


MUTATIONS = (
    *_mutations(LFP, "activation_energy_j_mol", "plating_activation_energy_j_mol",
                "low_temp_activation_energy_j_mol", "throughput_exponent", time_law=True),
    *_mutations(NMC, ("cell_a_temp_coefficient", "cell_b_temp_coefficient"),
                "plating_activation_energy_j_mol", "low_temp_activation_energy_j_mol",
                "throughput_exponent", time_law=True),
    *_mutations(VRLA, "halving_step_k", None, None, "woehler_exponent"),
    *_mutations(LTO, "activation_energy_j_mol"),
)
"""The perturbations of the report: each default set's key parameters (the halving step
stands for lead-acid's activation energy, the Wöhler exponent for its cycle exponent)."""


@dataclass(frozen=True)
class Coverage:
    mutation: Mutation
    failed: tuple[str, ...]


def mutation_coverage(mutations=MUTATIONS) -> list[Coverage]:
    """For each mutation, the validation rows of its set that the perturbed set fails."""
    out = []
    for m in mutations:
        refs = tuple(r for r in REFERENCES if r.kind == "validation" and m.set_id in r.sets)
        rows = run_validation(m.chem_of(), refs)
        out.append(Coverage(m, tuple(r.point.key for r in rows if not r.passed)))
    return out


# ------------------------------------------------------------------ report
def _number(value, digits):
    if value is None:
        return "-"
    if math.isinf(value):
        return "no limit"
    return f"{value:,.{digits}f}"


def _table(rows: list[Row]) -> list[str]:
    lines = ["| Key | Sets | Source | Condition | Reference | Predicted | Error | Band | Unit | Result |",
             "|---|---|---|---|---|---|---|---|---|---|"]
    for row in rows:
        p = row.point
        error = "-" if row.error_frac is None else f"{row.error_frac:+.1%}"
        band = f"{_number(p.band[0], p.digits)} to {_number(p.band[1], p.digits)}"
        source = p.source + (f" ({p.note})" if p.note else "")
        lines.append(f"| `{p.key}` | {', '.join(p.sets) or '-'} | {source} | {p.condition} | "
                     f"{_number(p.value, p.digits)} | {_number(row.predicted, p.digits)} | "
                     f"{error} | {band} | {p.unit} | {'pass' if row.passed else 'FAIL'} |")
    return lines


def render_markdown(rows: list[Row], coverage: list[Coverage] | None = None) -> str:
    """The report as Markdown (the content of ``docs/validation.md``)."""
    validation = [r for r in rows if r.point.kind == "validation"]
    calibration = [r for r in rows if r.point.kind == "calibration"]
    standards = [r for r in rows if r.point.kind == "standard"]
    failed = sum(not r.passed for r in rows)
    counts = ", ".join(f"{s}: {sum(s in r.point.sets for r in validation)}" for s in DEFAULT_SETS)
    lines = [
        "# Validation report",
        "",
        "Generated by `python -m planner.validation` (a test keeps this file equal to a fresh",
        "run at the precision printed). The reference values live in",
        "`planner/validation/references.py`, each row keyed by source, table or figure, and",
        "condition; they are never read from `chemistries.toml`. Error: predicted / reference",
        "- 1; band: the accepted predictions (inclusive, both ends finite). \"equation",
        "evaluated\": a paper's equation and coefficients computed at the condition; \"from",
        "memory\": recalled, not re-read; `common practice`: a fact of the trade.",
        "",
        f"{len(rows)} rows, {len(rows) - failed} pass, {failed} fail: {len(validation)} "
        f"independent validation rows ({counts}), {len(calibration)} calibration rows, "
        f"{len(standards)} standards' worked examples.",
        "",
        "## Validation: independent data the fits never saw",
        "",
        "No row here is among the fitted targets of the set it checks (a test asserts it by",
        "key).",
        "",
        *_table(validation),
        "",
        "Where no independent data could be found offline:",
        "",
        *[f"- {s}: {text}." for s, text in NO_INDEPENDENT_DATA.items()],
        "",
        "Where a default set departs from a fact of the trade (left so, with the reason):",
        "",
        *[f"- {s}: {text}." for s, text in DEPARTURES.items()],
        "",
        "## Calibration: what each set was fitted to (shown, not counted)",
        "",
        *_table(calibration),
        "",
        "## Standards and worked examples",
        "",
        *_table(standards),
        "",
    ]
    if coverage is not None:
        caught = sum(bool(c.failed) for c in coverage)
        lines += [
            "## Perturbation coverage",
            "",
            "Each default set's key parameters perturbed one at a time; the validation rows of",
            f"that set the perturbed model fails. {caught} of {len(coverage)} perturbations fail",
            "at least one validation row.",
            "",
            "| Set | Perturbation | Parameter | Validation rows failed |",
            "|---|---|---|---|",
        ]
        for c in coverage:
            m = c.mutation
            gap = KNOWN_GAPS.get((m.set_id, m.what))
            failed_rows = ", ".join(f"`{k}`" for k in c.failed) or (
                f"**none**: {gap}" if gap else "**none**")
            names = " and ".join(f"`{m.part}.{k}`" for k in m.keys)
            lines.append(f"| {m.set_id} | {m.what} | {names} x {m.factor:g} | {failed_rows} |")
        lines.append("")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m planner.validation",
                                     description="Reproduce the reference points the models rest on.")
    parser.add_argument("--out", default="docs/validation.md",
                        help="Markdown report to write (default docs/validation.md).")
    args = parser.parse_args(argv)
    from planner.fileio import write_atomically

    rows = run_validation()
    text = render_markdown(rows, mutation_coverage())
    write_atomically(Path(args.out), lambda tmp: Path(tmp).write_text(text, encoding="utf-8"),
                     what="validation report")
    failed = [row.point.key for row in rows if not row.passed]
    print(f"{len(rows)} rows, {len(rows) - len(failed)} pass, {len(failed)} fail; wrote {args.out}")
    for key in failed:
        print(f"FAIL {key}")
    return 1 if failed else 0


__all__ = ["FITTED_TARGETS", "KNOWN_GAPS", "MUTATIONS", "Row", "main", "mutation_coverage",
           "render_markdown", "run_validation"]
