"""Chemistry library: the battery chemistries a planner can choose, with sourced parameters.

The numbers live in ``planner/data/chemistries.toml``; every one carries a source
(paper and table/equation, standard and clause, ``common practice`` or ``from memory``).
This module turns them into frozen :class:`Chemistry` objects with small array-aware
helpers (derating, self-discharge, usable fraction vs charge voltage).

Capacity and state of charge are fractions of the *rated* capacity: the capacity reached
with the chemistry's default charge voltage (``usable_fraction`` is 1.0 there).

Examples
--------
>>> from planner.chemistry import get_chemistry
>>> lfp = get_chemistry("lfp")
>>> float(lfp.available_capacity_fraction(25.0))
1.0
"""

from __future__ import annotations

import functools
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from importlib import resources
from types import MappingProxyType

import numpy as np

from planner.errors import InputError

CHEMISTRY_IDS: tuple[str, ...] = ("vrla", "lfp", "nmc", "lto", "lisocl2")

_HOURS_PER_MONTH = 8760.0 / 12.0

# Scalar parameters every chemistry table must hold, as {value, source}.
_SCALARS = (
    "cell_voltage_v",
    "cell_capacity_ah",
    "default_charge_voltage_v_per_cell",
    "charge_temp_min_c",
    "charge_temp_max_c",
    "discharge_temp_min_c",
    "discharge_temp_max_c",
    "charge_efficiency_frac",
    "discharge_efficiency_frac",
    "max_charge_c_rate",
    "max_discharge_c_rate",
    "max_dod_frac",
    "mass_kg_per_kwh",
    "volume_l_per_kwh",
    "price_per_kwh",
    "temp_compensation_v_per_c_per_cell",
)


@dataclass(frozen=True)
class AgingEnvelope:
    """Conditions an aging parameter set was fitted on (outside them it extrapolates).

    Attributes
    ----------
    calendar_temp_c, cycle_temp_c : tuple[float, float]
        Lowest and highest test temperature behind the calendar and cycle fits, °C.
    soc_frac, c_rate : tuple[float, float]
        Range of storage state of charge and of cycling C-rate in the tests.
    test_years : float
        Longest test (or field statement) behind the fit, years.
    source : str
    lowest_soh_frac : float or None
        Lowest state of health the tests behind the fit reached: the knee-free laws are
        not carried below it (None: no such floor).
    """

    calendar_temp_c: tuple[float, float]
    cycle_temp_c: tuple[float, float]
    soc_frac: tuple[float, float]
    c_rate: tuple[float, float]
    test_years: float
    source: str
    lowest_soh_frac: float | None = None


@dataclass(frozen=True)
class AgingParams:
    """One named set of aging-model parameters for a chemistry.

    Attributes
    ----------
    name : str
        Set name (e.g. ``"calibrated"``, ``"naumann"``).
    description : str
        One line: which published models, and how the set was obtained.
    calendar_model, cycle_model : str
        Names of the laws in :mod:`planner.aging` that use the parameters.
    calendar, cycle : Mapping[str, float]
        Parameter values by name (units in the names).
    sources : Mapping[str, str]
        ``"calendar.<name>"`` / ``"cycle.<name>"`` -> source text.
    envelope : AgingEnvelope or None
        Conditions the set was fitted on.
    """

    name: str
    description: str
    calendar_model: str
    cycle_model: str
    calendar: Mapping[str, float]
    cycle: Mapping[str, float]
    sources: Mapping[str, str]
    envelope: AgingEnvelope | None = None


@dataclass(frozen=True)
class Chemistry:
    """A battery chemistry with sourced parameters (see module docstring for units).

    Scalar attributes are documented in ``planner/data/chemistries.toml``; ``sources``
    maps each parameter name to its source text. Tables are kept as tuples and
    interpolated linearly (held constant beyond the ends) by the methods.
    """

    id: str
    name: str
    rechargeable: bool
    cell_voltage_v: float
    cell_capacity_ah: float
    charge_voltages_v_per_cell: tuple[float, ...]
    default_charge_voltage_v_per_cell: float
    charge_temp_min_c: float
    charge_temp_max_c: float
    discharge_temp_min_c: float
    discharge_temp_max_c: float
    charge_efficiency_frac: float
    discharge_efficiency_frac: float
    max_charge_c_rate: float
    max_discharge_c_rate: float
    max_dod_frac: float
    mass_kg_per_kwh: float
    volume_l_per_kwh: float
    price_per_kwh: float
    temp_compensation_v_per_c_per_cell: float
    usable_table_v: tuple[float, ...]
    usable_table_frac: tuple[float, ...]
    derating_table_temp_c: tuple[float, ...]
    derating_table_frac: tuple[float, ...]
    self_discharge_frac_per_month_ref: float
    self_discharge_ref_temp_c: float
    self_discharge_doubling_k: float
    ocv_table_soc_frac: tuple[float, ...]
    ocv_table_voltage_v: tuple[float, ...]
    aging_sets: Mapping[str, AgingParams]
    default_aging_set: str
    sources: Mapping[str, str] = field(default_factory=dict)
    components: Mapping[str, float] = field(default_factory=dict)

    @property
    def round_trip_efficiency_frac(self) -> float:
        """Charge efficiency times discharge efficiency."""
        return self.charge_efficiency_frac * self.discharge_efficiency_frac

    @property
    def aging(self) -> AgingParams:
        """The default aging parameter set."""
        return self.aging_sets[self.default_aging_set]

    def aging_set(self, name: str | None = None) -> AgingParams:
        """Aging parameter set by name (``None`` = default); unknown -> InputError."""
        if name is None:
            return self.aging
        if name not in self.aging_sets:
            raise InputError(
                f"unknown aging parameter set {name!r} for {self.id}; "
                f"expected one of {', '.join(self.aging_sets)}",
                source="chemistry",
            )
        return self.aging_sets[name]

    def usable_fraction(self, charge_voltage_v_per_cell):
        """Usable capacity fraction (of rated) when charged to ``charge_voltage_v_per_cell``.

        Linear interpolation in the chemistry's table, held constant beyond its ends.
        Returns a float for a scalar input, else an array.
        """
        out = np.interp(charge_voltage_v_per_cell, self.usable_table_v, self.usable_table_frac)
        return float(out) if np.ndim(out) == 0 else out

    def available_capacity_fraction(self, temp_c):
        """Capacity available at battery temperature ``temp_c`` (°C), fraction of the 25 °C value.

        A derating (reversible), not aging. Array-aware; held constant beyond the table.
        """
        return np.interp(np.asarray(temp_c, dtype=float), self.derating_table_temp_c,
                         self.derating_table_frac)

    def self_discharge_frac_per_h(self, temp_c):
        """Self-discharge as a fraction of rated capacity per hour at ``temp_c`` (°C).

        ``s(T) = s_ref / 730 h * 2**((T - T_ref) / dT_double)``: the monthly figure at the
        reference temperature, doubling every ``self_discharge_doubling_k`` kelvin
        (see ``sources['self_discharge']``). Array-aware.
        """
        temp = np.asarray(temp_c, dtype=float)
        factor = np.exp2((temp - self.self_discharge_ref_temp_c) / self.self_discharge_doubling_k)
        return self.self_discharge_frac_per_month_ref / _HOURS_PER_MONTH * factor

    def open_circuit_voltage_v(self, soc_frac):
        """Open-circuit voltage per cell (V) at ``soc_frac`` of rated capacity (table, array-aware).

        Only chemistries whose aging law needs a voltage (NMC) carry a table; others
        return the nominal cell voltage everywhere.
        """
        soc = np.asarray(soc_frac, dtype=float)
        if not self.ocv_table_soc_frac:
            return np.full_like(soc, self.cell_voltage_v)
        return np.interp(soc, self.ocv_table_soc_frac, self.ocv_table_voltage_v)


def _value(table: dict, key: str, chem_id: str, sources: dict):
    entry = table.get(key)
    if not isinstance(entry, dict) or "value" not in entry or "source" not in entry:
        # Package data, not user input: a broken library is a programming error.
        raise RuntimeError(f"chemistries.toml: [{chem_id}].{key} needs value and source")
    sources[key] = str(entry["source"])
    return entry["value"]


def _table(table: dict, key: str, x: str, y: str, chem_id: str, sources: dict):
    entry = table.get(key)
    if entry is None:
        return (), ()
    if "source" not in entry:
        raise RuntimeError(f"chemistries.toml: [{chem_id}].{key} needs a source")
    sources[key] = str(entry["source"])
    xs = tuple(float(v) for v in entry[x])
    ys = tuple(float(v) for v in entry[y])
    if len(xs) != len(ys) or any(b <= a for a, b in zip(xs, xs[1:])):
        raise RuntimeError(f"chemistries.toml: [{chem_id}].{key} needs increasing {x}")
    return xs, ys


def _envelope(chem_id: str, set_name: str, raw) -> AgingEnvelope | None:
    if raw is None:
        return None
    where = f"chemistries.toml: [{chem_id}.aging.sets.{set_name}].envelope"
    try:
        pairs = {key: tuple(float(v) for v in raw[key])
                 for key in ("calendar_temp_c", "cycle_temp_c", "soc_frac", "c_rate")}
        if any(len(pair) != 2 or pair[1] < pair[0] for pair in pairs.values()):
            raise ValueError("ranges need [low, high]")
        lowest = raw.get("lowest_soh_frac")
        return AgingEnvelope(test_years=float(raw["test_years"]), source=str(raw["source"]),
                             lowest_soh_frac=None if lowest is None else float(lowest), **pairs)
    except (KeyError, TypeError, ValueError) as err:
        raise RuntimeError(f"{where} is incomplete ({err})") from None


def _aging_sets(chem_id: str, table: dict) -> tuple[dict, str]:
    aging = table["aging"]
    sets = {}
    for set_name, raw in aging["sets"].items():
        parts: dict[str, dict] = {"calendar": {}, "cycle": {}}
        sources = {}
        for part in ("calendar", "cycle"):
            for key, entry in raw.get(part, {}).items():
                if not isinstance(entry, dict) or "source" not in entry:
                    raise RuntimeError(
                        f"chemistries.toml: [{chem_id}.aging.sets.{set_name}].{part}.{key} "
                        "needs value and source")
                parts[part][key] = float(entry["value"])
                sources[f"{part}.{key}"] = str(entry["source"])
        sets[set_name] = AgingParams(
            name=set_name,
            description=str(raw["description"]),
            calendar_model=str(raw["calendar_model"]),
            cycle_model=str(raw["cycle_model"]),
            calendar=MappingProxyType(parts["calendar"]),
            cycle=MappingProxyType(parts["cycle"]),
            sources=MappingProxyType(sources),
            envelope=_envelope(chem_id, set_name, raw.get("envelope")),
        )
    default = str(aging["default"])
    if default not in sets:
        raise RuntimeError(f"chemistries.toml: [{chem_id}.aging] default {default!r} not in sets")
    return sets, default


def _build(chem_id: str, table: dict) -> Chemistry:
    sources: dict[str, str] = {}
    scalars = {key: float(_value(table, key, chem_id, sources)) for key in _SCALARS}
    settings = tuple(float(v) for v in _value(table, "charge_voltages_v_per_cell", chem_id, sources))
    usable_v, usable_f = _table(table, "usable_fraction", "charge_voltage_v_per_cell", "fraction",
                                chem_id, sources)
    derate_t, derate_f = _table(table, "available_capacity", "temp_c", "fraction", chem_id, sources)
    ocv_s, ocv_v = _table(table, "open_circuit_voltage", "soc_frac", "voltage_v", chem_id, sources)
    sd = table["self_discharge"]
    sources["self_discharge"] = str(sd["source"])
    components = {}
    for key, entry in table.get("components", {}).items():
        if not isinstance(entry, dict) or "value" not in entry or "source" not in entry:
            raise RuntimeError(f"chemistries.toml: [{chem_id}.components].{key} needs value and source")
        components[key] = float(entry["value"])
        sources[f"components.{key}"] = str(entry["source"])
    sets, default = _aging_sets(chem_id, table)
    for set_name, params in sets.items():
        for key, text in params.sources.items():
            sources[f"aging.{set_name}.{key}"] = text
    return Chemistry(
        id=chem_id,
        name=str(table["name"]),
        rechargeable=bool(table["rechargeable"]),
        charge_voltages_v_per_cell=settings,
        usable_table_v=usable_v,
        usable_table_frac=usable_f,
        derating_table_temp_c=derate_t,
        derating_table_frac=derate_f,
        self_discharge_frac_per_month_ref=float(sd["frac_per_month_at_ref"]),
        self_discharge_ref_temp_c=float(sd["ref_temp_c"]),
        self_discharge_doubling_k=float(sd["doubling_k"]),
        ocv_table_soc_frac=ocv_s,
        ocv_table_voltage_v=ocv_v,
        aging_sets=MappingProxyType(sets),
        default_aging_set=default,
        sources=MappingProxyType(sources),
        components=MappingProxyType(components),
        **scalars,
    )


@functools.lru_cache(maxsize=1)
def _library() -> dict[str, Chemistry]:
    text = resources.files("planner").joinpath("data/chemistries.toml").read_bytes()
    raw = tomllib.loads(text.decode("utf-8"))
    return {chem_id: _build(chem_id, raw[chem_id]) for chem_id in CHEMISTRY_IDS}


def get_chemistry(chem_id: str) -> Chemistry:
    """The :class:`Chemistry` with id ``chem_id``.

    Raises
    ------
    planner.errors.InputError
        For an unknown id; the message lists the valid ids.
    """
    key = str(chem_id).strip().lower()
    if key not in CHEMISTRY_IDS:
        raise InputError(
            f"unknown chemistry {chem_id!r}; expected one of {', '.join(CHEMISTRY_IDS)}",
            source="chemistry",
        )
    return _library()[key]


def all_chemistries() -> list[Chemistry]:
    """Every chemistry of the library, in the order of :data:`CHEMISTRY_IDS`."""
    return [get_chemistry(chem_id) for chem_id in CHEMISTRY_IDS]
