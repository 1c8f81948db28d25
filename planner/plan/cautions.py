"""Safety cautions printed with every plan, and per-site warning helpers.

The planner chooses batteries and visit years; it does not design installations. Every
caution therefore ends by deferring to the codes and standards that govern the work and
to licensed practice. Scopes of the named standards are summarised in
``../shared/notes/sizing-economics.md`` §7.2 (from memory unless marked there).
"""

from __future__ import annotations

from dataclasses import dataclass

from planner.plan.numbers import finite_number


@dataclass(frozen=True)
class Caution:
    """One standard caution.

    Attributes
    ----------
    topic : str
        A few words, e.g. ``"Hydrogen from lead-acid batteries"``.
    text : str
        What to watch for, in plain words.
    defer_to : str
        The codes, standards or rules that govern it (the reader must follow those).
    """

    topic: str
    text: str
    defer_to: str


#: Instruction shown above the cautions in the workbook and in the plan.
DEFER_INSTRUCTION = (
    "This plan chooses batteries and visit years; it is not an installation design. "
    "Follow local codes, the applicable standards (for example NFPA 855, IEC 62485-2, IEC 62619) "
    "and licensed practice for every installation, ventilation, wiring, handling and transport step."
)

#: The usual safety cautions for battery work at remote sites (common practice; the
#: standards named are those practitioners defer to, scopes from memory).
STANDARD_CAUTIONS: tuple[Caution, ...] = (
    Caution(
        "Hydrogen from lead-acid batteries",
        "Charging, above all equalising or boost charging, releases hydrogen; the lower explosive "
        "limit is about 4 % in air. Ventilate enclosures and keep sparks and flames away from vents.",
        "IEC 62485-2 (ventilation of stationary battery installations); IEEE 1635 / ASHRAE Guideline 21",
    ),
    Caution(
        "Thermal runaway of lithium-ion batteries",
        "Overcharge, external heat, internal shorts or crushing can start thermal runaway, which "
        "releases flammable and toxic gas and can spread cell to cell. Use a battery management "
        "system with voltage and temperature cut-offs.",
        "IEC 62619; NFPA 855; UL 9540A test data from the cell supplier",
    ),
    Caution(
        "No lithium-ion charging in the cold",
        "Charging lithium-ion cells below their minimum charge temperature (typically 0 °C) plates "
        "lithium and damages the cell; charge only when heated above it (check the cell datasheet).",
        "Cell manufacturer's datasheet; IEC 62619",
    ),
    Caution(
        "Transport of lithium cells",
        "Lithium cells and batteries are dangerous goods in transport, including by helicopter: "
        "packs must have passed UN 38.3 tests and be packed, labelled and declared accordingly.",
        "UN Manual of Tests and Criteria, section 38.3; the dangerous-goods rules of the carrier",
    ),
    Caution(
        "Heavy lifting",
        "Battery packs are heavy and sites are awkward to reach; plan team lifts or lifting aids. "
        "The NIOSH lifting equation's load constant is 23 kg under ideal conditions.",
        "Local occupational-safety rules; Waters et al. 1993, Ergonomics 36(7) 749-776",
    ),
    Caution(
        "DC arcs and short circuits",
        "A battery cannot be switched off: a dropped tool across terminals gives a large fault "
        "current and a DC arc that does not self-extinguish. Use insulated tools, cover terminals, "
        "fuse close to the battery.",
        "NFPA 70 (NEC) Articles 480 and 706; NFPA 70E; local electrical code",
    ),
)

#: Chemistry ids that are lithium-ion (rechargeable, plating risk when charged cold).
LITHIUM_ION_IDS = frozenset({"lfp", "nmc"})
#: Chemistry ids containing lithium (transport rules apply).
LITHIUM_IDS = frozenset({"lfp", "nmc", "lto", "lisocl2"})

#: Typical minimum charge temperature of graphite-anode lithium-ion cells [°C]
#: (common practice; ../shared/notes/sizing-economics.md §2.2, §7.1). LTO is excluded on
#: purpose: its anode does not plate lithium at 0 °C.
LITHIUM_ION_CHARGE_MIN_C = 0.0
#: Typical maximum charge temperature of lithium-ion cells [°C] (common practice; same note).
LITHIUM_ION_CHARGE_MAX_C = 45.0
#: Load constant of the revised NIOSH lifting equation [kg]
#: (Waters, Putz-Anderson, Garg & Fine 1993, Ergonomics 36(7) 749-776, eq. 1: LC = 23 kg; from memory).
NIOSH_LOAD_CONSTANT_KG = 23.0


def cold_charge_warning(site_id: str, chemistry: str, battery_p1_c: float, *,
                        heated: bool = False, charge_temp_min_c: float = LITHIUM_ION_CHARGE_MIN_C) -> str | None:
    """Warn when a lithium-ion pack sees temperatures where charging must be blocked.

    Parameters
    ----------
    site_id : str
    chemistry : str
        Chemistry id; only graphite-anode lithium-ion (``lfp``, ``nmc``) is checked.
    battery_p1_c : float
        1st percentile of hourly battery temperature [°C].
    heated : bool
        True when a battery heater holds the pack above the limit while charging.
    charge_temp_min_c : float
        Minimum charge temperature [°C]; default 0 °C (common practice, cell datasheets).

    Returns
    -------
    str or None
        One line, or None when no warning applies.
    """
    if chemistry not in LITHIUM_ION_IDS or heated or battery_p1_c is None:
        return None
    if battery_p1_c >= charge_temp_min_c:
        return None
    return (f"{site_id}: battery falls to {battery_p1_c:.1f} °C (P1), below the {charge_temp_min_c:.0f} °C "
            f"minimum charge temperature of {chemistry}; charging is blocked in those hours unless heated "
            "(IEC 62619; cell datasheet)")


def hot_battery_warning(site_id: str, chemistry: str, battery_p99_c: float, *,
                        max_temp_c: float = LITHIUM_ION_CHARGE_MAX_C) -> str | None:
    """Warn when the battery's P99 temperature exceeds the chemistry's upper limit [°C].

    The default limit is the typical 45 °C maximum charge temperature of lithium-ion cells
    (common practice); pass the chemistry's own limit when known.
    """
    if battery_p99_c is None or battery_p99_c <= max_temp_c:
        return None
    return (f"{site_id}: battery reaches {battery_p99_c:.1f} °C (P99), above the {max_temp_c:.0f} °C limit "
            f"assumed for {chemistry}; shade, ventilate or bury the enclosure, and check the cell datasheet")


def heavy_pack_warning(site_id: str, pack_mass_kg: float, *,
                       limit_kg: float = NIOSH_LOAD_CONSTANT_KG) -> str | None:
    """Warn when a pack is heavier than one person should lift under ideal conditions.

    Uses the load constant of the revised NIOSH lifting equation, 23 kg (Waters et al.
    1993, Ergonomics 36(7) 749-776, eq. 1). Real site conditions lower the limit.
    """
    if pack_mass_kg is None or pack_mass_kg <= limit_kg:
        return None
    return (f"{site_id}: pack mass {pack_mass_kg:.0f} kg exceeds the {limit_kg:.0f} kg NIOSH load constant; "
            "split the pack into modules or plan a team lift or lifting aid")


def lithium_transport_warning(region: str, year: int, month: int, chemistries) -> str | None:
    """Note that a trip carries lithium packs, which travel as dangerous goods (UN 38.3)."""
    carried = sorted(set(chemistries) & LITHIUM_IDS)
    if not carried:
        return None
    return (f"Trip {region}, year {year}, month {month}: carries lithium packs ({', '.join(carried)}); "
            "UN 38.3 test summary and dangerous-goods packing and declaration required")


def derived_site_warnings(site: dict) -> list[str]:
    """Warnings the report can derive from a plan site dict (tolerant of missing keys).

    Adds cold-charge, hot-battery (lithium-ion only, typical limits) and heavy-pack
    warnings to what the models already raised, unless the models already covered the
    topic; duplicates are dropped, order kept.
    """
    site_id = str(site.get("id", "?"))
    chem = str(site.get("chemistry", ""))
    temp = site.get("temperature") if isinstance(site.get("temperature"), dict) else {}
    warnings = site.get("warnings")
    raised = [str(w) for w in warnings] if isinstance(warnings, list | tuple) else []
    said = " ".join(raised).lower()
    # The models may already have warned about cold charging or heat in their own words
    # (the energy stage reports blocked charging hours): do not say it twice.
    cold_covered = "charge_blocked_hours_per_year" in site or "cold" in said
    hot_covered = "above" in said and "°c" in said
    found = [
        None if cold_covered else cold_charge_warning(site_id, chem, finite_number(temp.get("battery_p1_c")),
                                                      heated=bool(site.get("heater"))),
        None if hot_covered or chem not in LITHIUM_ION_IDS else hot_battery_warning(site_id, chem,
                                                                                   finite_number(temp.get("battery_p99_c"))),
        heavy_pack_warning(site_id, finite_number(site.get("pack_mass_kg"))),
    ]
    out = []
    for text in [*raised, *(f for f in found if f)]:
        if text not in out:
            out.append(text)
    return out


@dataclass(frozen=True)
class WarningKind:
    """A kind of per-site warning, how to recognise it and what to do about it.

    Attributes
    ----------
    title : str
        The kind in a few words (the Cautions sheet groups warnings by it).
    action : str
        What a planner or crew should do.
    phrases : tuple of str
        Lower-case phrases of the warnings of this kind (the first kind that matches wins).
    """

    title: str
    action: str
    phrases: tuple[str, ...]


#: Kinds of per-site warnings, the ones to act on first. Add a kind here.
WARNING_KINDS: tuple[WarningKind, ...] = (
    WarningKind("No design can serve the site",
                "Change the site (thermal measure, charging source, load): see sheet Needs attention.",
                ("no design can serve",)),
    WarningKind("Charging source too small",
                "Enlarge the charging source or reduce the load; no pack size fixes it.",
                ("charging source too small",)),
    WarningKind("Load not served",
                "A larger charging source for the darkest or coldest weeks, or accept the days off air.",
                ("of load a year not served",)),
    WarningKind("Pack in service at the end of its life",
                "Replace it at the first visit; carry a spare on the first trip.", ("end of its life",)),
    WarningKind("Lead-acid may freeze",
                "Keep the pack charged and warm (insulated box or heater), or choose another chemistry.",
                ("may freeze",)),
    WarningKind("Charging blocked by cold",
                "A battery heater or insulated box; lithium-ion must not be charged below its minimum "
                "charge temperature.", ("charging blocked by cold", "minimum charge temperature")),
    WarningKind("Battery too hot",
                "Shade, ventilate or bury the enclosure; check the cell datasheet's limit.",
                ("battery above", "(p99), above")),
    WarningKind("Heavy pack",
                "Split the pack into modules, or plan a team lift or a lifting aid.", ("niosh",)),
    WarningKind("Battery heater energy",
                "None: the heater's energy is in the load the pack is sized for.", ("battery heater",)),
    WarningKind("Life extrapolated",
                "Check the life against capacity tests or field data before relying on the visit year.",
                ("extrapolated",)),
    WarningKind("Other", "Read the warning.", ()),
)


def warning_kind(text: str) -> WarningKind:
    """The :data:`WARNING_KINDS` entry a per-site warning belongs to ("Other" when none)."""
    lowered = str(text).lower()
    for kind in WARNING_KINDS:
        if any(phrase in lowered for phrase in kind.phrases):
            return kind
    return WARNING_KINDS[-1]
