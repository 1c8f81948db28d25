"""A synthetic plan for report tests: invented demo values, structurally complete.

Everything here is made up (names, regions, costs, fade curves); only the layout follows
docs/plan-json.md. Nothing in it is an expected value for a model.
"""

from __future__ import annotations

import copy

import numpy as np

CHEMISTRIES = ("vrla", "lfp", "nmc", "lto", "lisocl2")
CHEMISTRY_NAMES = {"vrla": "Demo lead-acid", "lfp": "Demo iron phosphate", "nmc": "Demo nickel oxide",
                   "lto": "Demo titanate", "lisocl2": "Demo primary"}
REGIONS = ("Demo North Valley", "Demo Dry Flats", "Demo Cold Coast")
#: One region per about this many sites (as in benchmarks/fleet_gen.py), so trips have
#: fleet-sized site lists.
SITES_PER_REGION = 40
TRIP_COST, SITE_VISIT_COST = 2500.0, 150.0
CLIMATES = ("alpine", "hot-desert", "polar-coast", "temperate-maritime")
ENCLOSURES = ("cabinet-sun", "cabinet-shade", "vault", "shelter")
MONTHS_OPEN = (6, 7, 8, 9)


def _soh_curve(horizon_years, life_years, replacement_years, rng):
    """Invented saw-tooth: square-root fade from each replacement month."""
    months = np.arange(12 * horizon_years + 1)
    last = np.zeros_like(months)
    for year in replacement_years:
        last = np.where(months >= 12 * year, 12 * year, last)
    age_years = (months - last) / 12.0
    rate = 0.2 / np.sqrt(max(life_years, 0.5))
    return np.clip(1.0 - rate * np.sqrt(age_years) - rng.uniform(0, 0.002), 0.0, 1.0)


SPENDING_KEYS = ("packs", "labour", "trips", "disposal", "thermal", "downtime", "risk", "residual")


def _spending(sites, trips, horizon_years, *, rate, inflation, start_year):
    """Invented spending by year that adds up to the sites' present costs: each part of a
    site's cost breakdown spread evenly (in present value) over its replacement years; the
    residual value in the end year; trips (mobilisation and site visits) the year they go."""
    h = horizon_years
    spv = (1.0 + rate) ** -np.arange(h + 1)
    names = {"failure_risk": "risk"}
    by_region = {}
    for site in sites:
        flows = by_region.setdefault(site["region"], {k: np.zeros(h + 1) for k in SPENDING_KEYS})
        years = np.asarray(site["replacement_years"])
        for part, pv in site["cost_breakdown"].items():
            key = names.get(part, part)
            if key == "residual":
                flows[key][h] += pv / spv[h]
            elif key != "trips":
                flows[key][years] += pv / len(years) / spv[years]
    for trip in trips:
        by_region[trip["region"]]["trips"][trip["year"]] += trip["cost"] + trip["site_visits_cost"]

    def rows(flows):
        total = sum(flows[k] for k in SPENDING_KEYS)
        return [{"year": y, "calendar_year": start_year + y, **{k: float(flows[k][y]) for k in SPENDING_KEYS},
                 "failure_risk": float(flows["risk"][y]),
                 "total": float(total[y]), "total_nominal": float(total[y] * (1 + inflation) ** y),
                 "present_value": float(total[y] * spv[y])} for y in range(h + 1)]

    fleet = {k: sum(f[k] for f in by_region.values()) for k in SPENDING_KEYS}
    return rows(fleet), [{"region": r, "rows": rows(f)} for r, f in sorted(by_region.items())]


def _comparison_row(chem, k, total, sites):
    """An invented comparison row; lisocl2 serves no site, nmc all but the first site."""
    fleet = total * (1.0 + 0.1 * k) if chem != "lisocl2" else total
    unserved = ([s["id"] for s in sites] if chem == "lisocl2" else
                [sites[0]["id"]] if chem == "nmc" and sites else [])
    return {"chemistry": chem, "total_present_cost": fleet if chem != "lisocl2" else None,
            "total_with_others_present_cost": fleet,
            "status": "infeasible" if unserved else "optimal",
            "sites_served": len(sites) - len(unserved), "sites_unserved": unserved,
            "kept_by_other": {i: "lfp" for i in unserved},
            "equipment": 0.4 * fleet, "trips_and_labour": 0.4 * fleet, "downtime": 0.15 * fleet,
            "failure_risk": 0.05 * fleet,
            "driving_sites": [{"id": sites[0]["id"], "chemistry": chem, "difference": 0.1 * k * total,
                               "downtime_difference": 0.05 * k * total}] if k and sites else []}


def _regions(n_sites):
    n = max(len(REGIONS), round(n_sites / SITES_PER_REGION))
    return REGIONS + tuple(f"Demo district {k:02d}" for k in range(n - len(REGIONS)))


def _pack(chem, capacity_wh, mass_kg, measure, year, month, life):
    per_cell = 3.45 if chem == "lfp" else 2.3 if chem == "vrla" else 2.6 if chem == "lto" else 4.1
    cells = {"lfp": 4, "vrla": 6, "lto": 5, "nmc": 3}[chem]
    return {"year": year, "month": month, "chemistry": chem, "capacity_wh": capacity_wh,
            "charge_voltage_v_per_cell": per_cell, "charge_voltage_v": per_cell * cells,
            "pack_structure": f"{cells}s2p", "pack_mass_kg": mass_kg, "thermal_measure": measure,
            "life_years": life, "oversize_factor": 1.0, "purchase_price": capacity_wh / 2.0}


def make_plan(n_sites: int = 3, horizon_years: int = 20, seed: int = 0, *, hostile_names: bool = False,
              with_optional: bool = True, lost_load: bool = False) -> dict:
    """Return an invented plan dict.

    Parameters
    ----------
    hostile_names : bool
        Name site 0 ``=HYPERLINK("x")`` and site 1 ``+1+1``; give site 2 the region ``-Demo Ridge``.
    with_optional : bool
        Include optional parts (sensitivity, alternatives, P10/P90 life and SOH bands).
    lost_load : bool
        Let every 25th site (from site 7) lose 15 % of its load and every 25th (from site 11)
        0.4 %, as a fleet with undersized charging sources does.
    """
    rng = np.random.default_rng(seed)
    regions = _regions(n_sites)
    sites = []
    trips = {}
    for i in range(n_sites):
        chem = CHEMISTRIES[i % 4]
        region = regions[i % len(regions)]
        life = float(rng.uniform(4.0, 12.0))
        # sites of a region are visited together, as a fleet plan groups them: the region's
        # replacement step and month
        k_region = i % len(regions)
        step = (6, 8, 10, 12)[k_region % 4]
        repl = list(range(0, horizon_years, step))
        months = [int(MONTHS_OPEN[(k_region + k) % len(MONTHS_OPEN)]) for k in range(len(repl))]
        ref_wh = float(rng.uniform(500, 5000))
        over = float(rng.choice([1.0, 1.5, 2.0, 3.0]))
        packs, labour = float(rng.uniform(1000, 9000)), float(rng.uniform(200, 900))
        trips_share, disposal = float(rng.uniform(500, 4000)), float(rng.uniform(20, 200))
        residual, risk = -float(rng.uniform(0, 800)), float(rng.uniform(0, 300))
        downtime = float(rng.uniform(0, 2000)) if i % 5 == 0 else 0.0
        del trips_share  # the site's share of its trips is added once the trips are known
        breakdown = {"packs": packs, "labour": labour, "trips": 0.0, "disposal": disposal,
                     "residual": residual, "failure_risk": risk, "downtime": downtime}
        air = 10 + 12 * np.sin(np.linspace(0, 2 * np.pi, 12, endpoint=False) - 2) + rng.normal(0, 1, 12)
        batt = air + rng.uniform(2, 8)
        name = f"Demo gauge {i:04d}"
        if hostile_names and i == 0:
            name = '=HYPERLINK("x")'
        if hostile_names and i == 1:
            name = "+1+1"
        if hostile_names and i == 2:
            region = "-Demo Ridge"
        site = {
            "id": f"S{i:04d}", "name": name, "region": region,
            "climate": CLIMATES[i % len(CLIMATES)], "enclosure": ENCLOSURES[i % len(ENCLOSURES)],
            "charging": "pv" if i % 3 else "mains-float",
            "chemistry": chem, "oversize_factor": over,
            "system_voltage_v": 12.0, "charge_voltage_v": 14.4 if chem != "vrla" else 13.8,
            "charge_voltage_v_per_cell": 3.6 if chem != "vrla" else 2.3,
            "capacity_wh": ref_wh * over, "capacity_ah": ref_wh * over / 12.0,
            "pack_structure": "4s2p" if chem != "vrla" else "6s1p",
            "pack_mass_kg": float(rng.uniform(5, 60)),
            "replacement_years": repl, "replacement_months": months,
            "life_years": life, "limiting_cause": ["calendar", "cycling", "cold capacity"][i % 3],
            "present_cost": sum(breakdown.values()), "cost_breakdown": breakdown,
            "reference_capacity_wh": ref_wh, "unserved_wh_per_year": float(rng.uniform(0, 5)),
            "equivalent_full_cycles_per_year": float(rng.uniform(20, 300)),
            "reference_factors": {"daily_load_wh": ref_wh / 6, "autonomy_days": 5.0, "max_dod_frac": 0.8,
                                  "temperature_factor": 1.1, "aging_factor": 1.25, "design_margin": 1.1,
                                  "design_temp_c": -10.0},
            "daily_load_wh": ref_wh / 6, "load_peak_w": float(rng.uniform(5, 50)),
            "temperature": {"air_mean_c": float(air.mean()), "air_p99_c": float(air.max() + 8),
                            "battery_mean_c": float(batt.mean()), "battery_p1_c": float(batt.min() - 6),
                            "battery_p99_c": float(batt.max() + 12), "hours_above_45c": float(rng.integers(0, 400)),
                            "hours_below_0c": float(rng.integers(0, 2000)),
                            "effective_temp_c": float(batt.mean() + 3)},
            "climate_monthly": {"air_mean_c": air.tolist(), "battery_mean_c": batt.tolist()},
            "soh_by_month": _soh_curve(horizon_years, life, repl, rng).tolist(),
            "warnings": [f"demo warning for site {i}"] if i % 2 == 0 else [],
            "next_visit_year": repl[1] if len(repl) > 1 else None,
            # most packs are safe until their visit, one in ten may not be
            "risk_before_next_visit_frac": float(rng.uniform(0, 0.3) if i % 10 == 4 else rng.uniform(0, 0.08)),
        }
        measure = "insulated-box" if i % 6 == 1 else "none"
        mass = site["pack_mass_kg"]
        site.update({
            "chemistry_name": CHEMISTRY_NAMES[chem], "eol_soh_frac": 0.7 if chem != "vrla" else 0.8,
            "oversize_factor_step": over, "thermal_measure": measure,
            "access_months": list(range(1, 13)) if i % 3 == 0 else list(MONTHS_OPEN),
            "notes": ("Demo note: gate key at the depot" if i % 10 == 1 else
                      "Demo note: boat landing, calm days only" if i % 10 == 6 else ""),
            "charge_blocked_hours_per_year": float(rng.integers(0, 200)) if chem in ("lfp", "nmc") else 0.0,
            "life_extrapolated": i % 4 != 3,
            "life_extrapolation_note": "demo fit spans 25-45 °C; this is 12 °C" if i % 4 != 3 else "",
            "years_to_report_soh": life * 0.9,
            "replacements": [_pack(CHEMISTRIES[(i + 1) % 4] if k == len(repl) - 1 and i % 7 == 0 else chem,
                                   site["capacity_wh"], mass, measure, y, m, life)
                             for k, (y, m) in enumerate(zip(repl, months))],
        })
        if lost_load and i % 25 in (7, 11):
            share = 0.15 if i % 25 == 7 else 0.004
            site["unserved_wh_per_year"] = share * site["daily_load_wh"] * 365.0
            site["limiting_cause"] = "charging source too small (December: 4.8 kWh offered, 6.4 kWh drawn)"
            breakdown["downtime"] = share * 365.0 * 200.0 * 10.0
        if i % 5 == 3:
            site["existing_pack"] = {"chemistry": "vrla", "capacity_wh": site["capacity_wh"] * 0.8,
                                     "age_years": 6.0, "pack_mass_kg": mass * 1.3, "remaining_life_years": 1.5}
        site["expected_failure_cost_before_next_visit"] = site["risk_before_next_visit_frac"] * 3000.0
        site["expected_downtime_cost_before_next_visit"] = site["risk_before_next_visit_frac"] * 1200.0
        if with_optional:
            kind = ("station", "normals", "bundled")[i % 3]
            site["site_climate"] = {
                "kind": kind, "climate": site["climate"],
                "source": {"station": f"demo-station-{i % 4}.epw", "normals": f"S{i:04d} (normals.csv)",
                           "bundled": site["climate"]}[kind],
                "latitude_deg": float(rng.uniform(-40, 65)), "longitude_deg": float(rng.uniform(-120, 150)),
                "altitude_m": float(rng.uniform(0, 3000)), "position_from": "sites table",
                "utc_offset_h": float(rng.integers(-8, 10)), "utc_offset_from": "longitude",
                "station_distance_km": float(rng.uniform(1, 300)) if kind == "station" else None,
                "reference_altitude_m": float(rng.uniform(0, 2000)),
                "altitude_shift_k": float(rng.uniform(-5, 5)), "notes": [], "warnings": []}
            site["life_p10_years"] = life * 0.8
            site["life_p50_years"] = life
            site["life_p90_years"] = life * 1.15
            if i % 2 == 0:
                site["soh_p10_by_month"] = (np.array(site["soh_by_month"]) - 0.04).tolist()
                site["soh_p90_by_month"] = (np.array(site["soh_by_month"]) + 0.03).tolist()
            alts = []
            for other in CHEMISTRIES[:4]:
                if other == chem:
                    continue
                alt_life = float(rng.uniform(3, 14))
                alt_repl = list(range(0, horizon_years, max(1, int(alt_life))))
                alts.append({"chemistry": other, "oversize_factor": 2.0, "charge_voltage_v": 14.0,
                             "capacity_wh": ref_wh * 2, "life_years": alt_life,
                             "present_cost": site["present_cost"] * float(rng.uniform(1.01, 1.6)),
                             "soh_by_month": _soh_curve(horizon_years, alt_life, alt_repl, rng).tolist()})
            site["alternatives"] = alts
        sites.append(site)
        for year, month in zip(repl, months):
            trips.setdefault((region, year, month), []).append(site)
    trip_list = []
    for (region, year, month), members in sorted(trips.items(), key=lambda kv: (kv[0][1], kv[0][2], kv[0][0])):
        trip_list.append({"region": region, "year": year, "month": month,
                          "site_ids": [s["id"] for s in members], "pack_count": len(members),
                          "pack_mass_kg": float(sum(s["pack_mass_kg"] for s in members)),
                          "trip_count": 1, "cost": TRIP_COST,
                          "site_visits_cost": SITE_VISIT_COST * len(members)})
        for s in members:  # each site's share of the trip, present value at the start
            s["cost_breakdown"]["trips"] += (TRIP_COST / len(members) + SITE_VISIT_COST) / 1.03 ** year
    for s in sites:
        s["present_cost"] = float(sum(s["cost_breakdown"].values()))
    total = float(sum(s["present_cost"] for s in sites))
    spending, by_region = _spending(sites, trip_list, horizon_years, rate=0.03, inflation=0.02, start_year=2030)
    groups = {"equipment": 0.0, "trips_and_labour": 0.0, "downtime": 0.0, "failure_risk": 0.0}
    for s in sites:
        b = s["cost_breakdown"]
        groups["equipment"] += b["packs"] + b["disposal"] + b["residual"]
        groups["trips_and_labour"] += b["trips"] + b["labour"]
        groups["downtime"] += b["downtime"]
        groups["failure_risk"] += b["failure_risk"]
    plan = {
        "schema_version": 1,
        "study": {"name": "demo-network", "currency": "EUR", "horizon_years": horizon_years,
                  "discount_rate_frac": 0.03, "sites_file": "demo-sites.csv",
                  "start_year": 2030, "inflation_frac": 0.02, "report_soh_frac": 0.8},
        "total_present_cost": total,
        "solver": {"name": "HiGHS", "status": "optimal", "gap_frac": 0.0012, "seconds": 1.75,
                   "objective": total, "best_bound": total * (1 - 0.0012), "decomposition": "per region"},
        "sites": sites,
        "trips": trip_list,
        "spending_by_year": spending,
        "spending_by_region": by_region,
        "cost_groups": groups,
        "chemistry_comparison": [_comparison_row(c, k, total, sites) for k, c in enumerate(CHEMISTRIES)],
        "assumptions": [
            {"group": "economics", "name": "real discount rate", "value": 0.03, "unit": "fraction",
             "source": "study file"},
            {"group": "costs", "name": "helicopter mobilisation", "value": 2500.0, "unit": "EUR per trip",
             "source": "illustrative"},
            {"group": "aging", "name": "lead-acid life halving step", "value": 8.0, "unit": "K",
             "source": "common practice"},
        ],
        "cautions": ["Demo caution from the pipeline."],
        "unserved_sites": [],
    }
    if with_optional:
        plan["sensitivity"] = [
            {"case": "trip cost x0.5", "total_present_cost": total * 0.9, "change_frac": -0.1, "designs_changed": 1},
            {"case": "trip cost x2", "total_present_cost": total * 1.2, "change_frac": 0.2, "designs_changed": 2},
            {"case": "warming +2 K", "total_present_cost": total * 1.05, "change_frac": 0.05, "designs_changed": 0},
        ]
    return copy.deepcopy(plan)
