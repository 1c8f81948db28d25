"""``planner life`` pack options (docs/pack.md): JSON keys and trade facts."""

import json

import pytest
from click.testing import CliRunner

from planner.cli import cli


def life_json(*args):
    result = CliRunner().invoke(cli, ["life", "--chemistry", "lfp", "--temp-c", "35", "--json",
                                      "--draws", "400", *args])
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


def test_pack_options_add_the_fixed_percentile_keys():
    out = life_json("--series-cells", "8")
    for key in ("years_to_eol_p10", "years_to_eol_p50", "years_to_eol_p90"):
        assert key in out
    assert out["years_to_eol_p10"] <= out["years_to_eol_p50"] <= out["years_to_eol_p90"]


def test_without_pack_options_no_percentiles():
    result = CliRunner().invoke(cli, ["life", "--chemistry", "lfp", "--temp-c", "35", "--json"])
    assert "years_to_eol_p50" not in json.loads(result.output)


def test_more_cells_in_series_never_lengthen_p10():
    # common practice: a longer series string has a weaker weakest cell.
    short = life_json("--series-cells", "2")
    long = life_json("--series-cells", "16")
    assert long["years_to_eol_p10"] <= short["years_to_eol_p10"] + 1e-9


def test_weakest_link_pack_never_outlives_the_nominal_cell_median():
    # Definition: a series string is limited by its weakest cell, so its median life is not
    # longer than the nominal single cell's by more than the cells' own spread allows.
    out = life_json("--series-cells", "16", "--cell-spread-frac", "0.02")
    assert out["years_to_eol_p50"] <= out["years_to_eol"] * 1.05


@pytest.mark.parametrize("args, words", [
    (["--series-cells", "0"], "--series-cells"),
    (["--draws", "3"], "--draws"),
    (["--cell-spread-frac", "0.9"], "--cell-spread-frac"),
])
def test_bad_pack_options_exit_2(args, words):
    result = CliRunner().invoke(cli, ["life", "--chemistry", "lfp", "--temp-c", "25", *args])
    assert result.exit_code == 2 and words in result.output


def test_across_models_widens_the_band_and_says_so():
    # Disagreement between published parameter sets (Naumann et al. 2018
    # published set vs the calibrated default, docs/aging.md) must widen the distribution.
    one = life_json("--series-cells", "4")
    both = life_json("--series-cells", "4", "--across-models")
    assert (both["years_to_eol_p90"] - both["years_to_eol_p10"]
            >= one["years_to_eol_p90"] - one["years_to_eol_p10"])
    assert any("model" in note.lower() for note in both["pack_notes"])


@pytest.mark.parametrize("cells, draws", [
    (1000, 100000),     # 208 s and 6.3 GiB before the bound
    (200, 50000),       # variant: 10 million cell draws, twice the bound
])
def test_pack_monte_carlo_past_the_stated_bound_is_refused(cells, draws):
    from planner.cli.life import MAX_CELL_DRAWS

    result = CliRunner().invoke(cli, ["life", "--chemistry", "lfp", "--temp-c", "25",
                                      "--series-cells", str(cells), "--draws", str(draws)])
    assert result.exit_code == 2 and f"{cells * draws:,} cell draws" in result.output
    assert f"at most {MAX_CELL_DRAWS:,}" in result.output


def test_pack_monte_carlo_at_the_bound_runs():
    result = CliRunner().invoke(cli, ["life", "--chemistry", "lfp", "--temp-c", "25",
                                      "--series-cells", "50", "--draws", "100000", "--json"])
    assert result.exit_code == 0, result.output
    assert json.loads(result.output)["draws"] == 100000
