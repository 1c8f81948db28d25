"""A synthetic plan for report tests: invented demo values, structurally complete.

Everything here is made up (names, regions, costs, fade curves); only the layout follows
docs/plan-json.md. Nothing in it is an expected value for a model.
"""

from __future__ import annotations

import copy

import numpy as np

CHEMISTRIES = ("vrla", "lfp", "nmc", "lto", "lisocl2")
REGIONS = ("Demo North Valley", "Demo Dry Flats", "Demo Cold Coast")
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


def _spending(sites, horizon_years, *, rate, inflation, start_year):
    """Invented spending by year that adds up to the sites' present costs: each part of a
    site's cost breakdown spread evenly (in present value) over its replacement years; the
    residual value in the end year."""
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
            else:
                flows[key][years] += pv / len(years) / spv[years]

    def rows(flows):
        total = sum(flows[k] for k in SPENDING_KEYS)
        return [{"year": y, "calendar_year": start_year + y, **{k: float(flows[k][y]) for k in SPENDING_KEYS},
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


def make_plan(n_sites: int = 3, horizon_years: int = 20, seed: int = 0, *, hostile_names: bool = False,
              with_optional: bool = True) -> dict:
    """Return an invented plan dict.

    Parameters
    ----------
    hostile_names : bool
        Name site 0 ``=HYPERLINK("x")`` and site 1 ``+1+1``; give site 2 the region ``-Demo Ridge``.
    with_optional : bool
        Include optional parts (sensitivity, alternatives, P10/P90 life and SOH bands).
    """
    rng = np.random.default_rng(seed)
    sites = []
    trips = {}
    for i in range(n_sites):
        chem = CHEMISTRIES[i % 4]
        region = REGIONS[i % len(REGIONS)]
        life = float(rng.uniform(4.0, 12.0))
        step = max(1, int(life))
        repl = list(range(0, horizon_years, step))
        months = [int(MONTHS_OPEN[(i + k) % len(MONTHS_OPEN)]) for k in range(len(repl))]
        ref_wh = float(rng.uniform(500, 5000))
        over = float(rng.choice([1.0, 1.5, 2.0, 3.0]))
        packs, labour = float(rng.uniform(1000, 9000)), float(rng.uniform(200, 900))
        trips_share, disposal = float(rng.uniform(500, 4000)), float(rng.uniform(20, 200))
        residual, risk = -float(rng.uniform(0, 800)), float(rng.uniform(0, 300))
        downtime = float(rng.uniform(0, 2000)) if i % 5 == 0 else 0.0
        breakdown = {"packs": packs, "labour": labour, "trips": trips_share, "disposal": disposal,
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
            "risk_before_next_visit_frac": float(rng.uniform(0, 0.3)),
        }
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
                          "cost": 2500.0 + 150.0 * len(members)})
    total = float(sum(s["present_cost"] for s in sites))
    spending, by_region = _spending(sites, horizon_years, rate=0.03, inflation=0.02, start_year=2030)
    plan = {
        "schema_version": 1,
        "study": {"name": "demo-network", "currency": "EUR", "horizon_years": horizon_years,
                  "discount_rate_frac": 0.03, "sites_file": "demo-sites.csv",
                  "start_year": 2030, "inflation_frac": 0.02},
        "total_present_cost": total,
        "solver": {"name": "HiGHS", "status": "optimal", "gap_frac": 0.0012, "seconds": 1.75,
                   "objective": total, "best_bound": total * (1 - 0.0012), "decomposition": "per region"},
        "sites": sites,
        "trips": trip_list,
        "spending_by_year": spending,
        "spending_by_region": by_region,
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
