"""Candidates a site's system voltage rules out (planner/designs/candidates.py).

Class: a system voltage below one cell's voltage used to build a one-cell pack charged
above the bus without a word. A chemistry whose single cell is above the system voltage
is not offered at that site, and the plan's site warnings say which and why (a voltage
below every candidate's cell is refused by the study loader: tests/test_study_loading.py).
Nominal cell voltages: lead-acid 2.0 V, LFP 3.2 V, NMC 3.6 V (common practice).
"""

import pytest

from planner.designs.candidates import enumerate_site_designs, ruled_out_by_voltage
from planner.site.model import model_sites
from planner.study.loading import load_study


@pytest.mark.parametrize("volts, ruled_out, offered", [
    ("3", {"lfp", "nmc"}, {"vrla"}),        # a bus below a lithium cell
    ("3.4", {"nmc"}, {"vrla", "lfp"}),      # variant: between an LFP and an NMC cell
    ("12", set(), {"vrla", "lfp", "nmc"}),
])
def test_chemistries_above_the_bus_are_ruled_out(tmp_path, volts, ruled_out, offered):
    (tmp_path / "s.csv").write_text("id,region,climate,load_w,charging,pv_wp,autonomy_days,"
                                    f"system_voltage_v\nA,r,temperate-maritime,2,pv,60,5,{volts}\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "s.csv"\n'
                                     '[candidates]\nchemistries = ["vrla", "lfp", "nmc"]\n')
    study = load_study(tmp_path / "s.toml")
    designs, excluded, _ = enumerate_site_designs(study, 0, model_sites(study)[0])
    assert set(ruled_out_by_voltage(excluded)) == ruled_out
    assert {d.chemistry for d in designs} == offered
    for chem in ruled_out:
        assert f"system voltage {volts} V is below one {chem} cell" in excluded[chem]
    # what is offered fits the bus: its nominal voltage at most the system's charge
    # voltage (1.2 x nominal, the series rule of planner.pack.structure)
    assert all(d.pack.nominal_voltage_v <= 1.2 * float(volts) + 1e-9 for d in designs)
