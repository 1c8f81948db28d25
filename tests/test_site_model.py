"""One site's hourly world: load terms and charging source wiring."""

import numpy as np
import pytest

from planner.site.model import model_sites
from planner.study.loading import load_study


def test_load_terms_add_and_scale_by_month(tmp_path):
    # Definition of the load model (docs/energy.md): P[h] = m[month] x (constant + schedule[hour]
    # + file[h] + burst duty x burst power). Here: 1 W + 2 W for 12 h a day + 1.5 W from the
    # file, x1.5 in December -> mean 3.5 W, 1.5 x 3.5 W in December.
    (tmp_path / "load.csv").write_text("load_w\n" + "1.5\n" * 8760)
    schedule = ";".join(["0"] * 12 + ["2"] * 12)
    factors = ";".join(["1"] * 11 + ["1.5"])
    (tmp_path / "sites.csv").write_text(
        "id,region,climate,load_w,load_schedule_w,load_monthly_factors,load_file,charging,autonomy_days\n"
        f"A,r,hot-desert,1,{schedule},{factors},load.csv,mains,2\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    model = model_sites(load_study(tmp_path / "s.toml"))[0]
    december = model.load_w[-31 * 24:]
    assert np.allclose(december.reshape(31, 24).mean(axis=1), 1.5 * 3.5)
    assert model.load_w[:24].mean() == pytest.approx(3.5)
    expected_daily = (3.5 * 24 * (365 - 31) + 1.5 * 3.5 * 24 * 31) / 365
    assert model.daily_load_wh == pytest.approx(expected_daily)


def test_snow_months_stop_pv_charging(tmp_path):
    # pv_snow_months: the array is taken as covered, so it offers no power those months
    # (common practice: a snow-covered module produces next to nothing).
    (tmp_path / "sites.csv").write_text(
        "id,region,climate,load_w,charging,pv_wp,pv_snow_months,autonomy_days\n"
        "A,r,alpine,1,pv,80,12-2,5\nB,r,alpine,1,pv,80,,5\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    covered, open_sky = model_sites(load_study(tmp_path / "s.toml"))
    january = slice(0, 31 * 24)
    assert covered.charge_w[january].sum() == 0.0
    assert open_sky.charge_w[january].sum() > 0.0
    july = slice(181 * 24, 212 * 24)
    assert covered.charge_w[july].sum() == pytest.approx(open_sky.charge_w[july].sum())


def test_pv_sites_sharing_a_climate_scale_one_profile(tmp_path):
    # PVWatts DC power is proportional to the array nameplate pdc0 (pvlib pvwatts_dc:
    # P = E/1000 * pdc0 * (1 + gamma (T_cell - 25)); Dobos 2014, PVWatts Version 5 Manual,
    # NREL/TP-6A20-62641, eq. 1, from memory), so sites of one climate and orientation
    # share a per-watt profile; it must equal the site's own PVWatts run.
    from planner.energy.pv import pv_dc_power_w

    (tmp_path / "sites.csv").write_text(
        "id,region,climate,load_w,charging,pv_wp,autonomy_days\n"
        "A,r,mediterranean,1,pv,40,5\nB,r,mediterranean,1,pv,130,5\n")
    (tmp_path / "s.toml").write_text('[study]\nsites_file = "sites.csv"\n')
    models = model_sites(load_study(tmp_path / "s.toml"))
    for m in models:
        own = pv_dc_power_w(m.year, array_wp=m.site.pv_wp, tilt_deg=m.pv_tilt_deg,
                            azimuth_deg=m.pv_azimuth_deg)
        np.testing.assert_allclose(m.charge_w, own, rtol=1e-12, atol=1e-12)
    assert models[1].charge_w.sum() == pytest.approx(130 / 40 * models[0].charge_w.sum())
