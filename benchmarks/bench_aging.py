"""Benchmark of the aging engine: sites x designs x 20 years from hourly typical-year inputs.

Speed target of the project (figures in docs/aging.md): 1,000 sites x 240 designs over
20 years in <= 20 s and <= 2 GiB on the project's 2-core machine. Prints figures,
asserts nothing.

Inputs are synthetic but shaped like the real chain: one hourly battery temperature per
site (seasonal + daily swing + weather noise), and per design an hourly SOC that swings
daily (night discharge, day recharge, weather-dependent depth) scaled by the design's
oversizing factor, from a top SOC set by its charge voltage. Lanes of one site share
the site's temperature column (``lane_site``).

By default a scaled run (``--sites 20``) is timed and extrapolated linearly to 1,000
sites, because the machine is shared; ``--sites 1000`` runs the full size.

The SOC and current arrays are passed as the SOC simulation writes them: hours x lanes,
row-major, float32 (``--layout lanes`` / ``--dtype float64`` for the other forms). The
engine runs with ``--engine auto`` (numba kernels when installed); the first call, which
loads (or compiles) the kernels, is timed apart. The numpy path is timed on the first
call's lanes for the speed ratio between the two.

Also times a plain per-hour Python loop of the same model (LFP calendar by the
equivalent-time update with ``math.exp`` each hour, cycles by the reference ``rainflow``
package each year) for one lane over the horizon, and prints the speed ratio and the
difference between the two results.

Usage::

    python benchmarks/bench_aging.py [--sites 20] [--designs 240] [--years 20]
        [--engine auto|numba|numpy] [--layout hours|lanes] [--dtype float32|float64]
"""

from __future__ import annotations

import argparse
import math
import os
import resource
import time

import numpy as np
import rainflow

from planner.aging import age_lanes, kernels
from planner.chemistry import get_chemistry

H = 8760


def site_temperatures(n_sites, rng):
    """Hourly battery temperature per site, (8760, n_sites), °C."""
    hours = np.arange(H)
    season = np.sin(2 * np.pi * (hours / H - 0.3))[:, None]
    daily = np.sin(2 * np.pi * ((hours % 24) - 9) / 24)[:, None]
    mean = rng.uniform(-5, 30, n_sites)
    return mean + 12 * season + rng.uniform(3, 10, n_sites) * daily + rng.normal(0, 1.5, (H, n_sites))


def site_depth_patterns(n_sites, rng):
    """Daily discharge shape per site, 0 (full) .. 1 (deepest), (8760, n_sites)."""
    hours = np.arange(H)
    night = np.clip(np.cos(2 * np.pi * ((hours % 24) - 3) / 24), 0, None)[:, None]
    weather = np.repeat(rng.uniform(0.4, 1.0, (365, n_sites)), 24, axis=0)
    return night * weather


def design_grid(chem, n_designs):
    """Oversize factor and charge voltage for each design of a site."""
    volts = np.array(chem.charge_voltages_v_per_cell)
    n_oversize = max(n_designs // volts.size, 1)
    oversize = np.linspace(1.0, 10.0, n_oversize)
    grid_v, grid_f = np.meshgrid(volts, oversize)
    return grid_f.ravel()[:n_designs], grid_v.ravel()[:n_designs]


def lane_inputs(chem, patterns, oversize, volts, layout="hours", dtype=np.float32):
    """SOC and current (C-rate) for every site x design lane of a chunk of sites.

    ``layout="hours"``: (8760, n_lanes) row-major, as the SOC simulation writes it;
    ``"lanes"``: the same shape stored column-major (each lane's year contiguous).
    """
    n_sites = patterns.shape[1]
    depth_1x = 0.6  # depth of the deepest day at 1x size
    top = np.asarray(chem.usable_fraction(volts))
    scale = np.tile(depth_1x / oversize, n_sites)
    lane_site = np.repeat(np.arange(n_sites), oversize.size)
    soc = np.tile(top, n_sites) - patterns[:, lane_site] * scale
    current = soc - np.roll(soc, -1, axis=0)  # discharge positive
    order = "C" if layout == "hours" else "F"
    return (np.asarray(soc, dtype=dtype, order=order), np.asarray(current, dtype=dtype, order=order),
            lane_site)


def python_loop_one_lane(chem, temp_c, soc, current, volts, years):
    """Plain per-hour loop of the default LFP model (calendar: Naumann 2018 form; cycles:
    Naumann 2020 form split by Schimpe et al. 2018 into a film term on the counted cycles
    and a plating term over the charging hours)."""
    cal_p = chem.aging.calendar
    cyc_p = chem.aging.cycle
    r_gas = 8.314462618

    def arrhenius(temp_k, ea, ref_c):
        return math.exp(-ea / r_gas * (1 / temp_k - 1 / (ref_c + 273.15)))

    def calendar_af(temp_k):
        below = cal_p.get("low_temp_below_c")
        if below is None or temp_k - 273.15 >= below:
            return arrhenius(temp_k, cal_p["activation_energy_j_mol"], cal_p["temp_ref_c"])
        return (arrhenius(below + 273.15, cal_p["activation_energy_j_mol"], cal_p["temp_ref_c"])
                * arrhenius(temp_k, cal_p["low_temp_activation_energy_j_mol"], below))

    charge = [max(-c, 0.0) for c in current]
    charge_rate = sum(charge) / max(sum(1 for c in charge if c > 0), 1)
    share, beta = cyc_p["plating_share_ref"], cyc_p["plating_c_rate_beta"]
    w_mean = share * math.exp(beta * (charge_rate - 1.0))
    film_share = 1.0 - w_mean / ((1 - share) + w_mean)

    loss_cal = 0.0
    for _ in range(years):
        for h in range(H):
            k = (cal_p["k_ref_per_sqrt_s"] * calendar_af(temp_c[h] + 273.15)
                 * (cal_p["soc_c"] * (soc[h] - 0.5) ** 3 + cal_p["soc_d"]))
            t_eq = (loss_cal / k) ** 2
            loss_cal = k * math.sqrt(t_eq + 3600.0)
    discharge = [max(c, 0.0) for c in current]
    on = sum(1 for c in discharge if c > 0)
    c_rate = sum(discharge) / max(on, 1)
    k_top = int(np.argmax(soc))
    closed = list(soc[k_top:]) + list(soc[:k_top]) + [soc[k_top]]
    film = reference = cycles = 0.0
    for rng_, _mean, count, i0, i1 in rainflow.extract_cycles(closed):
        t_c = 0.5 * (temp_c[(i0 + k_top) % H] + temp_c[(i1 + k_top) % H]) + 273.15
        k = ((cyc_p["a"] * c_rate + cyc_p["b"])
             * (cyc_p["doc_c"] * (rng_ - 0.6) ** 3 + cyc_p["doc_d"]) / 100.0)
        reference += k * k * count * rng_
        cycles += count * rng_
        k_film = k * film_share * arrhenius(t_c, cyc_p["activation_energy_j_mol"], cyc_p["temp_ref_c"])
        film += k_film * k_film * count * rng_
    kappa = math.sqrt(reference / max(cycles, 1e-300)) * share / ((1 - share) + w_mean)
    plating = 0.0
    for h in range(H):
        if charge[h] > 0:
            k_h = (kappa * arrhenius(temp_c[h] + 273.15, -cyc_p["plating_activation_energy_j_mol"],
                                     cyc_p["plating_temp_ref_c"]) * math.exp(beta * (charge[h] - 1.0)))
            plating += k_h * k_h * charge[h]
    return 1.0 - loss_cal - math.sqrt(years * film) - math.sqrt(years * plating)


def machine_speed_s():
    """Seconds for 5 passes of an element-wise multiply over 1e7 doubles (load indicator)."""
    x = np.ones(10_000_000)
    start = time.perf_counter()
    for _ in range(5):
        x = x * 1.0000001
    return time.perf_counter() - start


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, default=20)
    parser.add_argument("--designs", type=int, default=240)
    parser.add_argument("--years", type=int, default=20)
    parser.add_argument("--sites-per-call", type=int, default=4)
    parser.add_argument("--chemistry", default="lfp")
    parser.add_argument("--skip-loop", action="store_true")
    parser.add_argument("--engine", default="auto", choices=["auto", "numba", "numpy"])
    parser.add_argument("--layout", default="hours", choices=["hours", "lanes"])
    parser.add_argument("--dtype", default="float32", choices=["float32", "float64"])
    args = parser.parse_args()

    chem = get_chemistry(args.chemistry)
    dtype = np.dtype(args.dtype)
    rng = np.random.default_rng(2024)
    print(f"machine load indicator: {machine_speed_s():.3f} s for 5 x 1e7 multiplies "
          f"(load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs); "
          f"compiled kernels: {f'yes, {kernels.thread_count()} threads' if kernels.AVAILABLE else 'no'}")
    temps = site_temperatures(args.sites, rng)
    patterns = site_depth_patterns(args.sites, rng)
    oversize, volts = design_grid(chem, args.designs)
    n_lanes_total = args.sites * oversize.size
    per_call = min(args.sites_per_call, args.sites)

    def call(sl, engine):
        soc, current, lane_site = lane_inputs(chem, patterns[:, sl], oversize, volts,
                                              args.layout, dtype)
        c0, t0 = time.process_time(), time.perf_counter()
        result = age_lanes(chem, temps[:, sl], soc, current, np.tile(volts, sl.stop - sl.start),
                           args.years, lane_site=lane_site, engine=engine)
        return result, time.perf_counter() - t0, time.process_time() - c0

    # First call: loads the compiled kernels from numba's cache (or compiles them).
    first = slice(0, per_call)
    _, t_first, _ = call(first, args.engine)
    _, t_numpy, cpu_numpy = call(first, "numpy")
    n_first = per_call * oversize.size
    t_inputs = t_aging = cpu_aging = 0.0
    last = None
    for start in range(0, args.sites, per_call):
        sl = slice(start, min(start + per_call, args.sites))
        t0 = time.perf_counter()
        lane_inputs(chem, patterns[:, sl], oversize, volts, args.layout, dtype)
        t_inputs += time.perf_counter() - t0
        last, wall, cpu = call(sl, args.engine)
        t_aging += wall
        cpu_aging += cpu
    peak_gib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20
    per_lane = t_aging / n_lanes_total
    full = 1000 * 240
    print(f"chemistry {chem.id}: {args.sites} sites x {oversize.size} designs = {n_lanes_total} lanes, "
          f"{args.years} years; SOC/current {args.layout}-major {args.dtype}; engine {args.engine}")
    print(f"  first call ({n_first} lanes, includes loading the kernels): {t_first:.2f} s")
    print(f"  input generation (not part of the engine): {t_inputs:.2f} s")
    print(f"  aging engine: {t_aging:.2f} s wall, {cpu_aging:.2f} s CPU "
          f"({per_lane * 1e3:.4f} ms wall, {cpu_aging / n_lanes_total * 1e3:.4f} ms CPU per lane)")
    print(f"  peak resident memory: {peak_gib:.2f} GiB")
    print(f"  extrapolated to 1,000 sites x 240 designs: {per_lane * full:.1f} s wall, "
          f"{cpu_aging / n_lanes_total * full:.1f} s CPU (target 20 s)")
    numpy_lane = t_numpy / n_first
    print(f"  numpy path on the first {n_first} lanes: {numpy_lane * 1e3:.4f} ms wall, "
          f"{cpu_numpy / n_first * 1e3:.4f} ms CPU per lane; ratio numpy / this engine: "
          f"{numpy_lane / per_lane:.1f}x wall, {cpu_numpy / n_first / (cpu_aging / n_lanes_total):.1f}x CPU")
    print(f"  life to 80 % of the last chunk's first designs [y]: "
          f"{np.round(last.years_to_soh(0.8)[:4], 2)}")

    if args.skip_loop or chem.id != "lfp":
        return
    soc, current, _ = lane_inputs(chem, patterns[:, :1], oversize[:1], volts[:1], "hours",
                                  np.float64)
    t0 = time.perf_counter()
    soh_loop = python_loop_one_lane(chem, temps[:, 0], soc[:, 0], current[:, 0], float(volts[0]),
                                    args.years)
    t_loop = time.perf_counter() - t0
    exact = age_lanes(chem, temps[:, :1], soc, current, volts[:1], args.years,
                      rate_bin_k=None, soc_bin_frac=None)
    print(f"per-hour Python loop, one lane, {args.years} years: {t_loop:.2f} s; "
          f"engine per lane: {per_lane * 1e3:.4f} ms; speed ratio {t_loop / per_lane:.0f}x "
          f"(numpy path: {t_loop / numpy_lane:.0f}x)")
    print(f"  final SOH loop {soh_loop:.6f} vs engine (exact rates) {exact.soh_monthly[-1, 0]:.6f}")


if __name__ == "__main__":
    main()
