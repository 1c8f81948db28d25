"""Energy balance of a remote site: loads, charging sources, hourly state of charge,
the 1x reference pack size and lead-acid freezing.

Public entry: :func:`planner.energy.soc.simulate_soc` / :func:`~planner.energy.soc.iter_soc_chunks`
(hourly state of charge of many lanes) and :func:`planner.energy.sizing.reference_capacity`
(the 1x pack); :func:`planner.energy.pv.pv_dc_power_w` (PV power on the battery bus).

Modules (one physical concept each):

- :mod:`planner.energy.loads`: hourly mean load and burst peak power.
- :mod:`planner.energy.pv`: PV array power delivered to the battery bus (pvlib PVWatts chain).
- :mod:`planner.energy.mains`: mains/generator availability with seeded outages.
- :mod:`planner.energy.soc`: hourly state-of-charge recursion, streamed in chunks of lanes.
  Its result types and summaries are in :mod:`planner.energy.soc_results`, the numpy hour
  loop in :mod:`planner.energy.soc_numpy`, the compiled (fused) path in
  :mod:`planner.energy.soc_fused` with the kernels of :mod:`planner.energy._soc_kernels`.
- :mod:`planner.energy.sizing`: stand-alone reference capacity (IEEE 1013 / IEEE 1562 chain).
- :mod:`planner.energy.freezing`: lead-acid electrolyte freezing point versus SOC.

The sub-modules are imported lazily by the caller (``from planner.energy import soc``) so
that importing this package does not pull in pvlib.
"""
