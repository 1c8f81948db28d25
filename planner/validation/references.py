"""The reference rows of the validation report, each keyed by source, table and condition.

Three kinds of row:

* ``calibration``: what an aging set was fitted to (or the published law it implements,
  evaluated at the paper's conditions). Shown, never counted as validation.
* ``validation``: independent data the fit never saw: another study, another cell, a
  condition outside the fitted targets, a fact of the trade the set was not tuned to.
* ``standard``: a standard's or handbook's worked example (rainflow counting, present
  values, sizing): the implementation checked against its source.

Every band is two-sided (both ends finite). The published values live here, never read
back from ``chemistries.toml``: the model parameters are, so a wrong parameter moves the
predictions (the mutation coverage of the report). :data:`FITTED_TARGETS` lists, per
aging set, the row keys it was fitted to; a test asserts that no validation row of a set
is among them.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Reference:
    """One reference point and the band a prediction must fall in (inclusive).

    ``key`` is ``source/table-or-figure/condition``; ``sets`` the aging sets
    (``chemistry/set``) it checks; ``value`` the reference figure (None for a range of
    practice); ``band`` why it is that wide is in ``note``.
    """

    key: str
    kind: str
    sets: tuple[str, ...]
    source: str
    condition: str
    value: float | None
    band: tuple[float, float]
    unit: str
    digits: int
    note: str = ""


def _x2(value: float) -> tuple[float, float]:
    """Within a factor of 2 either way (different cells of one chemistry)."""
    return (value / 2.0, value * 2.0)


LFP, NMC, VRLA, LTO, PRIMARY = ("lfp/large-format-fitted", "nmc/large-format-fitted",
                                "vrla/halving-8.3k", "lto/cycle-life", "lisocl2/self-discharge")
DEFAULT_SETS = (LFP, NMC, VRLA, LTO, PRIMARY)
LFP_SMALL_CELL, NMC_SMALL_CELL = "lfp/published", "nmc/published-storage"
"""The sets whose calendar level is that of the small cells behind the published laws
(selectable, not defaults): the rows of those papers' own levels check them."""
LFP_ONE_POINT, NMC_ONE_POINT = "lfp/large-format", "nmc/large-format"
"""The sets that keep the small cells' laws at the level of the large-format cells at one
point, stored full at 25 °C for a year (selectable, not defaults)."""
NMC_WARRANTY = "nmc/stationary"
"""The NMC set whose calendar rate is calibrated to warranties (selectable, not a default)."""

CROSS_CELL = "band: within a factor of 2 either way (another cell of the chemistry)"

GASPER = ("Gasper et al. 2023, J. Energy Storage 73, 109042 (doi 10.1016/j.est.2023.109042; "
          "title and volume from memory): one test matrix for large-format commercial cells, "
          "LFP 250 Ah and NMC 75 Ah (A) and 50 Ah (B1), their tested range 10-45 °C and "
          "states of charge 0-1 as the code gives it, storage for about 1.5 years (from "
          "memory); the life models "
          "the first author fitted to each cell evaluated at the condition (read in his "
          "open-source code; anode potential from Safari and Delacourt 2011 as in those "
          "models; the NMC models' temperature normalised by 273.15 + 35 K, as a later version "
          "of that code reads where an earlier one read 293.15 + 35)")
BANK = ("Bank et al. 2020, J. Power Sources 473, 228566 (title and volume from memory): "
        "commercial 10 Ah LTO-anode cells (NMC cathode) aged over temperature, rate and depth; "
        "the life model the first author of Gasper et al. 2023 fitted to those data, evaluated "
        "at the condition (read in his open-source code: cycling tested at 30-60 °C; 'almost "
        "no calendar aging impact at all until 80 Celsius'; the fit overestimates cycling fade "
        "in most cases, by its author's note)")
SMITH = ("Smith et al. 2017, Proc. American Control Conference, life model of a 75 Ah Kokam "
         "NMC cell stored and cycled from 0 to 55 °C (test range read in a code comment of the "
         "first author of Gasper et al. 2023; b1 with Ea = 35,392 J/mol on sqrt(t), read in a "
         "re-implementation)")

REFERENCES = (
    # ------------------------------------------ LFP (default: the large-format cell's law)
    Reference("gasper2023/calendar-models/soc100-25C-1y-lfp", "calibration", (LFP, LFP_ONE_POINT),
              GASPER + ": the LFP cell's model, 8.37e4 exp(-5210/T) exp(-3560 Ua/T) t^0.526 "
              "(t in days), the level of the default's law and of the set at one point",
              "LFP stored full at 25 °C for 1 year: capacity loss", 0.01712, (0.0169, 0.0173),
              "fraction", 4),
    Reference("gasper2023/calendar-models/soc100-45C-1y-lfp", "calibration", (LFP,),
              GASPER + ": the LFP cell's model (same), its heat sensitivity (about 46 kJ/mol "
              "stored full)",
              "LFP stored full at 45 °C for 1 year: capacity loss (warm)", 0.05479,
              (0.0542, 0.0554), "fraction", 4),
    Reference("gasper2023/calendar-models/soc100-10C-1y-lfp", "calibration", (LFP,),
              GASPER + ": the LFP cell's model (same) at the coldest tested temperature",
              "LFP stored full at 10 °C for 1 year: capacity loss (cold end of the fit)",
              0.006423, (0.00636, 0.00649), "fraction", 5),
    Reference("gasper2023/calendar-models/soc50-25C-1y-lfp", "calibration", (LFP,),
              GASPER + ": the LFP cell's model (same), its state-of-charge term through the "
              "anode potential",
              "LFP stored at SOC 0.5, 25 °C, 1 year: capacity loss", 0.01102, (0.0109, 0.0111),
              "fraction", 4),
    Reference("gasper2023/calendar-models/soc100-25C-1.5y-lfp", "calibration", (LFP,),
              GASPER + ": the LFP cell's model (same) at the end of the storage tests, its "
              "t^0.526; past it the default keeps the rate reached there",
              "LFP stored full at 25 °C for 1.5 years: capacity loss", 0.02119, (0.0210, 0.0214),
              "fraction", 4),
    Reference("naumann2018/calendar-model/0C-over-10C-soc100-1y", "calibration", (LFP,),
              "Naumann et al. 2018, J. Energy Storage 17, 153-169, calendar capacity model of a "
              "cell stored from 0 to 60 °C (test range from memory): exp(-17,126 J/mol / R x "
              "(1/273.15 - 1/283.15)) (equation evaluated), the slope the default takes below "
              "the large-format cell's coldest test",
              "LFP stored full for 1 year: capacity loss at 0 °C / at 10 °C (the default's "
              "cold slope)", 0.766, (0.760, 0.772), "ratio", 3),
    Reference("naumann2018/calendar-model/25C-soc50-1y", "calibration", (LFP_SMALL_CELL,),
              "Naumann et al. 2018, J. Energy Storage 17, 153-169, calendar capacity model "
              "(equation evaluated; coefficients read in a re-implementation by the same group)",
              "LFP storage at 25 °C, SOC 0.5, 1 year: capacity loss", 0.0425, (0.0420, 0.0430),
              "fraction", 4),
    Reference("naumann2018/calendar-model/25C-soc100-1y", "calibration", (LFP_SMALL_CELL,),
              "Naumann et al. 2018, calendar capacity model (same)",
              "LFP storage at 25 °C, SOC 1.0, 1 year: capacity loss", 0.0678, (0.0673, 0.0683),
              "fraction", 4),
    Reference("naumann2020/cycle-model/1C-doc100-1000fec", "calibration",
              (LFP, LFP_SMALL_CELL, LFP_ONE_POINT),
              "Naumann et al. 2020, J. Power Sources 451, 227666, cycle capacity model "
              "(equation evaluated; coefficients read in a re-implementation)",
              "LFP cycling at 1 C, depth 1.0, 1,000 full cycles, 25 °C: capacity loss", 0.0683,
              (0.0678, 0.0688), "fraction", 4),
    Reference("wang2011/eq5/c2-life-ratio-45C-over-25C", "calibration",
              (LFP_SMALL_CELL, LFP_ONE_POINT),
              "Wang et al. 2011, J. Power Sources 196, 3942-3948, Eq. 5 at C/2 (equation "
              "evaluated: exp((31,700 - 185) J/mol / R x (1/298.15 - 1/318.15))^(1/0.55))",
              "LFP life at 25 °C / life at 45 °C (the activation energy of the sets with "
              "Naumann's law above 25 °C)", 4.28, (4.2, 4.36), "ratio", 2),
    Reference("schimpe2018/table4/plating-share-1C-25C", "calibration", (LFP, LFP_SMALL_CELL),
              "Schimpe et al. 2018, J. Electrochem. Soc. 165 (2), A181-A193, Table IV: "
              "4.01e-4 / (4.01e-4 + 1.46e-4 x sqrt(2)) (read in a re-implementation)",
              "LFP, 1 cycle a day, 1 C, 25 °C: plating share of the cycle loss", 0.660,
              (0.62, 0.70), "fraction", 3),
    Reference("schimpe2018/table4/charge-at-0C-over-25C", "calibration", (LFP, LFP_SMALL_CELL),
              "Schimpe et al. 2018, Table IV: exp(55.5 kJ/mol / R x (1/273.15 - 1/298.15))",
              "LFP plating loss, charging hours at 0 °C / at 25 °C (same cycle)", 7.76,
              (7.6, 7.9), "ratio", 2),
    Reference("gasper2023/cycle-models/25C-80dod-c2-daily-lfp", "validation", (LFP,),
              GASPER + ": the LFP cell's model, calendar 8.37e4 exp(-5210/T) exp(-3560 Ua/T) "
              "t^0.526 averaged over the day and cycling (4.38e-8 + 1.55e-8 DOD + 1.68e-7 C) "
              "(exp(2190/T) + exp(-1.55e5/T)) EFC^0.828 with C the C-rate averaged over the "
              "day, as the model's code takes it (at the cycles' own C/2 it gives 3,300); the "
              "default's calendar law is that cell's within its tests, so the row checks its "
              "cycle law (Naumann et al. 2020) and its rule past the tests",
              "LFP, 25 °C, 1 cycle a day, 80 % depth, C/2, calendar fade included: cycles to "
              "80 % (cycling)", 6530.0, _x2(6530.0), "cycles", 0, CROSS_CELL),
    Reference("common-practice/storage/lfp-25C-full", "validation", (LFP, LFP_SMALL_CELL),
              "common practice: LFP stored full lasts about 15 years at 25 °C",
              "LFP stored full at 25 °C: years to 80 %", 15.0, (7.5, 30.0), "years", 1,
              "band: half to twice the trade figure, wide enough to hold the published storage "
              "data of the small cell (Naumann et al. 2018: 8.7 years) and those of the "
              "large-format cell carried at the rate its tests end on (about 26 years); the "
              "large-format model carried on as t^0.526 would give 107"),
    Reference("common-practice/storage/lfp-45C-full", "validation", (LFP, LFP_SMALL_CELL),
              "common practice: LFP stored full lasts about 3 years at 45 °C",
              "LFP stored full at 45 °C: years to 80 % (warm)", 3.0, (1.5, 9.0), "years", 1,
              "band: half to three times the trade figure, wide enough to hold the small "
              "cell's published data (2.0 years) and the large-format cell's carried at the "
              "rate its tests end on (about 7); its model carried on as t^0.526 would give 12"),
    Reference("common-practice/storage/life-halves-per-10K-lfp", "validation", (LFP,),
              "common practice: a lithium-ion cell's life roughly halves per 10 K",
              "LFP stored full: life at 25 °C / life at 35 °C (warm)", 2.0, (1.4, 3.2), "ratio", 2,
              "band: from 1.4 to 3.2, holding the trade's 2 and the large-format LFP cell's "
              "fitted law carried on as t^0.526 (3.1, computed)"),
    Reference("swierczynski2015/calendar-model/life-ratio-45C-over-25C", "validation",
              (LFP, LFP_SMALL_CELL),
              "Swierczynski et al. 2015, IEEE Trans. Ind. Appl. 51, 3453-3461, calendar model "
              "of A123 LFP cells from storage tests (equation evaluated; read in a "
              "re-implementation): (3.258e-9 45^5.087 + 0.295) / (3.258e-9 25^5.087 + 0.295) "
              "to the power 1/0.8",
              "LFP stored at 50 % SOC: life at 25 °C / life at 45 °C (heat sensitivity)", 4.55,
              (4.55 / 1.5, 4.55 * 1.5), "ratio", 2,
              "band: within x1.5 either way, two studies of the same chemistry (another lab, "
              "another cell)"),
    Reference("naumann2018/calendar-model/10C-over-25C-soc100-1y", "validation", (LFP,),
              "Naumann et al. 2018, calendar capacity model of a 26650 LFP cell stored from 0 "
              "to 60 °C (equation evaluated with the paper's own Ea = 17.1 kJ/mol: "
              "exp(-17,126 J/mol / R x (1/283.15 - 1/298.15)); the default's slope between 10 "
              "and 25 °C is the large-format cell's)",
              "LFP stored full for 1 year: capacity loss at 10 °C / at 25 °C (cold end)", 0.694,
              _x2(0.694), "ratio", 3, CROSS_CELL),
    Reference("naumann2018/calendar-model/60C-over-25C-soc50-1y", "validation", (LFP_ONE_POINT,),
              "Naumann et al. 2018, calendar capacity model at the top of its storage tests "
              "(equation evaluated with the paper's own Ea = 17.1 kJ/mol: exp(17,126 J/mol / R "
              "x (1/298.15 - 1/333.15)); the set's heat law above 25 °C comes from other "
              "studies)",
              "LFP storage at SOC 0.5 for 1 year: capacity loss at 60 °C / at 25 °C (hot end)",
              2.066, _x2(2.066), "ratio", 2, "band: within a factor of 2 (the two heat laws)"),
    Reference("naumann2018/calendar-model/60C-soc50-1y", "validation", (LFP_SMALL_CELL,),
              "Naumann et al. 2018, calendar capacity model at the top of its storage tests "
              "(equation evaluated with the paper's own Ea = 17.1 kJ/mol; the set's heat "
              "law above 25 °C comes from other studies)",
              "LFP storage at 60 °C, SOC 0.5, 1 year: capacity loss (hot end)", 0.0879,
              _x2(0.0879), "fraction", 4, "band: within a factor of 2 (the two heat laws)"),
    Reference("wang2011/eq5/c2-25C-1000ah", "validation", (LFP,),
              "Wang et al. 2011, Eq. 5, B = 31,630 at C/2 (from memory), A123 2.2 Ah cell "
              "(equation evaluated)",
              "LFP full-depth cycling at C/2, 25 °C, 1,000 Ah on a 2.2 Ah cell (455 cycles, "
              "76 days): capacity loss", 0.0425, _x2(0.0425), "fraction", 4, CROSS_CELL),
    Reference("wang2011/eq5/c2-25C-20pct-throughput", "validation", (LFP,),
              "Wang et al. 2011, Eq. 5, B = 31,630 at C/2 (from memory): 20 % loss after "
              "16,670 Ah through the 2.2 Ah cell (equation evaluated)",
              "LFP full-depth cycling at C/2, 25 °C: cycles to 80 % (throughput law)", 7578.0,
              _x2(7578.0), "cycles", 0, CROSS_CELL),
    Reference("common-practice/cold-charge-limit/lfp-5C-c5", "validation", (LFP,),
              "common practice: LFP datasheets cap the charge current between 0 and 10 °C at "
              "about 0.1-0.2 C (cold-and-scale research note), a limit meant to keep cold "
              "charging about as harmless as charging warm at the standard rate (inference)",
              "LFP, 1 cycle a day, 80 % depth: cycle loss charged at 5 °C at C/5 / charged "
              "at 25 °C at C/2 (cold end)", 1.0, (0.5, 3.0), "ratio", 2,
              "band: from half to three times (an inference from a current limit)"),
    Reference("common-practice/daily-cycling/lfp-25C", "validation", (LFP, LFP_SMALL_CELL),
              "common practice: LFP cells last 1,000-3,000 full cycles at least; stationary "
              "LFP cycled once a day lasts close to a decade",
              "LFP, 25 °C, 1 cycle a day, 80 % depth, C/2: cycles to 80 % (cycling)", None,
              (1500.0, 6000.0), "cycles", 0,
              "band: 1,500-6,000 holds the published small-cell data (about 1,800), the "
              "large-format data (the default: about 5,000) and the trade"),
    # ------------------------------------------ NMC (default: the large-format cells' law)
    Reference("gasper2023/calendar-models/soc100-25C-1y-nmc", "calibration", (NMC, NMC_ONE_POINT),
              GASPER + ": the NMC cells' models, A 8.71e-7 exp(10 (T/308.15)^3 / (Ua/0.123)^(1/3)) "
              "(t/1000 d)^0.578 and B1 36.2 exp(-4.4 (Ua/0.123)^(1/3) / (T/308.15)^3) "
              "(t/10,000 d)^0.708: A 1.30 %, B1 4.63 %, geometric mean shown, the level of the "
              "default's law and of the set at one point",
              "NMC stored full at 25 °C for 1 year: capacity loss", 0.02449, (0.0241, 0.0249),
              "fraction", 4),
    Reference("gasper2023/calendar-models/soc100-45C-1y-nmc", "calibration", (NMC,),
              GASPER + ": the NMC cells' models (same): A 11.6 %, B1 9.94 %, geometric mean "
              "shown, the heat sensitivity of the default's law",
              "NMC stored full at 45 °C for 1 year: capacity loss (warm)", 0.1074,
              (0.1063, 0.1085), "fraction", 4),
    Reference("gasper2023/calendar-models/soc100-10C-1y-nmc", "calibration", (NMC,),
              GASPER + ": the NMC cells' models (same) at the coldest tested temperature, "
              "geometric mean",
              "NMC stored full at 10 °C for 1 year: capacity loss (cold end of the fit)",
              0.008214, (0.00813, 0.00830), "fraction", 5),
    Reference("gasper2023/calendar-models/soc50-25C-1y-nmc", "calibration", (NMC,),
              GASPER + ": the NMC cells' models (same), their state-of-charge terms through "
              "the anode potential, geometric mean",
              "NMC stored at SOC 0.5, 25 °C, 1 year: capacity loss", 0.01055, (0.01044, 0.01066),
              "fraction", 5),
    Reference("gasper2023/calendar-models/soc100-25C-1.5y-nmc", "calibration", (NMC,),
              GASPER + ": the NMC cells' models (same) at the end of the storage tests, the "
              "geometric mean's t^0.643; past it the default keeps the rate reached there",
              "NMC stored full at 25 °C for 1.5 years: capacity loss", 0.03179, (0.0315, 0.0321),
              "fraction", 4),
    Reference("smith2017/calendar-model/0C-over-10C-soc100-1y", "calibration", (NMC,),
              SMITH + ": exp(-Ea/R (1/273.15 - 1/283.15)), the slope the default takes below "
              "the large-format cells' coldest test",
              "NMC stored full for 1 year: capacity loss at 0 °C / at 10 °C (the default's cold "
              "slope)", 0.577, (0.571, 0.583), "ratio", 3),
    Reference("smith2017/calendar-model/life-ratio-5C-over-25C", "calibration", (NMC_ONE_POINT,),
              SMITH + ": exp(2 Ea/R (1/278.15 - 1/298.15)), the slope the set at one point "
              "takes below its law's own fit's 35 °C",
              "NMC stored full: life at 5 °C / life at 25 °C (that set's cold slope)", 7.79,
              (7.7, 7.9), "ratio", 2),
    Reference("common-practice/stationary-nmc/5000-cycles-80dod", "calibration",
              (NMC, NMC_ONE_POINT, NMC_SMALL_CELL, NMC_WARRANTY),
              "common practice: stationary NMC modules are rated for about 5,000 cycles to "
              "80 % at 80 % depth, 25 °C, C/2 (datasheets, from memory)",
              "NMC cycle term alone, 1 cycle a day, 80 % depth, 25 °C, C/2: cycles to 80 %",
              5000.0, (4900.0, 5100.0), "cycles", 0),
    Reference("common-practice/stationary-nmc/warranty-70pct-10y", "calibration", (NMC_WARRANTY,),
              "common practice: stationary NMC storage warranted to keep 70 % after 10 years "
              "of daily cycling (manufacturers' warranties, from memory)",
              "NMC, 1 cycle a day, 80 % depth, 25 °C, C/2, 4.20 V: state of health after 10 years",
              0.70, (0.69, 0.71), "fraction", 3),
    Reference("common-practice/stationary-nmc/1500-daily-cycles", "calibration", (NMC_WARRANTY,),
              "common practice: stationary NMC lasts at least 1,500 daily cycles (follows "
              "from the two calibration figures above)",
              "NMC, 1 cycle a day, 80 % depth, 25 °C, C/2, calendar fade included: cycles to 80 %",
              None, (1500.0, 6000.0), "cycles", 0),
    Reference("common-practice/stationary-nmc/daily-cycles-25C-80dod-c2", "validation", (NMC,),
              "common practice: stationary NMC lasts at least 1,500 cycles at one cycle a day "
              "(modules rated for thousands of cycles, warranties of about ten years of daily "
              "cycling, from memory); neither figure is what the default was fitted to (its "
              "calendar law comes from large-format cells, its cycle term from the rated "
              "cycle life alone)",
              "NMC, 1 cycle a day, 80 % depth, 25 °C, C/2, charged to 4.20 V, calendar fade "
              "included: cycles to 80 % (cycling)", None, (1500.0, 6000.0), "cycles", 0,
              "band: at least 1,500 (the trade's floor) and no more than the 5,000 rated "
              "cycles of the cycle term alone with a margin"),
    Reference("mokidm/abstract/samsung-nmc-35C-75dod", "validation", (NMC,),
              "Mokidm et al., experimental degradation data of Sony and BYD LFP and Samsung "
              "NMC cells (abstract read: the Samsung NMC cell reached 80 % after 3,000 cycles "
              "at 35 °C and 75 % depth; rate not given, C/2 assumed)",
              "NMC cycled back to back at 35 °C, 75 % depth, C/2: cycles to 80 % (warm, cycling)",
              3000.0, _x2(3000.0), "cycles", 0, CROSS_CELL),
    Reference("waldmann2014/arrhenius-plot/1C-5C-over-25C", "validation", (NMC,),
              "Waldmann et al. 2014, J. Power Sources 262, 129-135: graphite/NMC-LMO cells "
              "cycled at 1 C age faster below 25 °C (read); the low-temperature branch is "
              "about 55.5 kJ/mol, exp(55.5 kJ/mol / R (1/278.15 - 1/298.15)) = 5.0 (from memory)",
              "NMC, 1 cycle a day at 1 C: cycle loss at 5 °C / at 25 °C (cold end)", 5.0,
              (2.5, 10.0), "ratio", 2, "band: within a factor of 2 (magnitude from memory)"),
    Reference("smith2017/calendar-model/life-ratio-60C-over-35C", "validation", (NMC,),
              SMITH + ": exp(2 Ea/R (1/308.15 - 1/333.15)); the default's heat law is the "
              "large-format cells' (tested to 45 °C), carried to 60 °C",
              "NMC stored full: life at 35 °C / life at 60 °C (hot end)", 7.95, _x2(7.95),
              "ratio", 2, CROSS_CELL),
    Reference("smith2017/calendar-model/10C-over-25C-soc100-1y", "validation", (NMC,),
              SMITH + ": exp(-Ea/R (1/283.15 - 1/298.15)) (equation evaluated); the default's "
              "slope between 10 and 25 °C is the large-format cells'",
              "NMC stored full for 1 year: capacity loss at 10 °C / at 25 °C (cold end)", 0.469,
              _x2(0.469), "ratio", 3, CROSS_CELL),
    Reference("common-practice/storage/life-halves-per-10K-nmc", "validation", (NMC,),
              "common practice: a lithium-ion cell's life roughly halves per 10 K",
              "NMC stored full: life at 25 °C / life at 35 °C (warm)", 2.0, (1.4, 3.2), "ratio", 2,
              "band: from 1.4 to 3.2, holding the trade's 2 and the large-format LFP cell's "
              "fitted law carried on as t^0.526 (3.1, computed)"),
    Reference("smith2017/calendar-model/life-ratio-60C-over-25C", "validation", (NMC_SMALL_CELL,),
              "Smith et al. 2017, Proc. American Control Conference, life model of a Kokam "
              "NMC cell: b1 with Ea = 35,392 J/mol on sqrt(t), exp(2 Ea/R (1/298.15 - "
              "1/333.15)) (parameters read in a re-implementation; test range from memory)",
              "NMC stored full: life at 25 °C / life at 60 °C (hot end)", 20.1, _x2(20.1),
              "ratio", 1, CROSS_CELL),
    Reference("schmalstieg2014/alpha-cap/4.1V-25C-365d", "calibration",
              (NMC_SMALL_CELL, "nmc/schmalstieg-published"),
              "Schmalstieg et al. 2014, J. Power Sources 257, 325-334, alpha_cap equation "
              "(equation evaluated; coefficients read in a re-implementation)",
              "NMC storage at 4.1 V, 25 °C, 365 days: remaining capacity", 0.959, (0.957, 0.961),
              "fraction", 3),
    Reference("schmalstieg2014/alpha-cap/4.1V-35C-365d", "calibration",
              (NMC_SMALL_CELL, "nmc/schmalstieg-published"),
              "Schmalstieg et al. 2014, alpha_cap equation (same)",
              "NMC storage at 4.1 V, 35 °C, 365 days: remaining capacity", 0.912, (0.910, 0.914),
              "fraction", 3),
    Reference("schmalstieg2014/beta-cap/3.667V-dod100-1000ah", "calibration", ("nmc/schmalstieg-published",),
              "Schmalstieg et al. 2014, beta_cap equation (same)",
              "NMC cycling, mean voltage 3.667 V, depth 1.0, 1,000 Ah: remaining capacity",
              0.847, (0.845, 0.849), "fraction", 3),
    Reference("common-practice/consumer-nmc/full-1C-cycles-4.20V", "calibration", ("nmc/schmalstieg",),
              "common practice: consumer NMC cells at 4.20 V, full 1 C cycles, 25 °C: 300-500 "
              "cycles", "NMC consumer set, back-to-back full 1 C cycles at 4.20 V: cycles to 80 %",
              None, (300.0, 500.0), "cycles", 0),
    # ------------------------------------------------ LFP against NMC, same conditions
    # Stored, the defaults' laws are these cells' models (calibration); the sets at one
    # point keep the small cells' laws, which the 45 °C ordering checks.
    Reference("gasper2023/calendar-models/soc100-45C-1y-nmc-over-lfp", "validation",
              (LFP_ONE_POINT, NMC_ONE_POINT),
              GASPER + ": NMC A / LFP 2.12, NMC B1 / LFP 1.81 (geometric mean shown)",
              "stored full at 45 °C for 1 year: NMC capacity loss / LFP capacity loss (warm, "
              "side by side)", 1.96, (1.0, 4.23), "ratio", 2,
              "band: from 1 (both NMC cells lose more than the LFP cell: the ordering) to twice "
              "the larger ratio"),
    Reference("gasper2023/calendar-models/soc100-25C-1y-nmc-over-lfp", "calibration",
              (LFP, NMC, LFP_ONE_POINT, NMC_ONE_POINT),
              GASPER + ": NMC A / LFP 0.76, NMC B1 / LFP 2.70 (geometric mean shown); the "
              "condition both defaults' calendar laws and both sets at one point are set at, so "
              "the ratio follows",
              "stored full at 25 °C for 1 year: NMC capacity loss / LFP capacity loss (side by "
              "side)", 1.43, (1.40, 1.46), "ratio", 2),
    Reference("gasper2023/cycle-models/25C-80dod-c2-1000cycles-nmc-over-lfp", "validation",
              (LFP, NMC),
              GASPER + ": NMC A / LFP 0.62, NMC B1 / LFP 1.21 (geometric mean shown)",
              "1,000 cycles back to back at 80 % depth from full, C/2, 25 °C (about 5.5 months): "
              "NMC capacity loss / LFP capacity loss, calendar fade during the test included "
              "(cycling, side by side)", 0.862, (0.308, 2.42), "ratio", 2,
              "band: from half the smaller ratio to twice the larger"),
    Reference("gasper2023/cycle-models/45C-80dod-c2-1000cycles-nmc-over-lfp", "validation",
              (LFP, NMC),
              GASPER + ": NMC A / LFP 1.31, NMC B1 / LFP 1.73 (geometric mean shown)",
              "1,000 cycles back to back at 80 % depth from full, C/2, 45 °C: NMC capacity loss "
              "/ LFP capacity loss, calendar fade during the test included (warm cycling, side "
              "by side)", 1.51, (1.0, 3.46), "ratio", 2,
              "band: from 1 (both NMC cells lose more than the LFP cell: the ordering) to twice "
              "the larger ratio"),
    # ---------------------------------------------------------------- VRLA
    Reference("agm-datasheets/woehler/50pct", "calibration", (VRLA,),
              "AGM deep-cycle datasheets (from memory): 500-700 cycles at 50 % depth",
              "VRLA cycles to end of life at 50 % depth (Wöhler curve)", None, (500.0, 700.0),
              "cycles", 0),
    Reference("agm-datasheets/woehler/30pct", "calibration", (VRLA,),
              "AGM deep-cycle datasheets (from memory): 1,200-1,500 cycles at 30 % depth",
              "VRLA cycles to end of life at 30 % depth (Wöhler curve)", None, (1200.0, 1500.0),
              "cycles", 0),
    Reference("bu806a/halving-rule/33C", "validation", (VRLA,),
              "Battery University BU-806a: life halves per 8 °C above 25 °C (10 years at 25 °C "
              "-> 5 at 33 °C); the set's step is IEEE 1187/1188 practice (8.3 K)",
              "VRLA float life at 33 °C (10 years at 25 °C)", 5.0, (4.5, 5.75), "years", 2,
              "band: the 8-10 K step of practice, less 10 %"),
    Reference("bu806a/halving-rule/41C", "validation", (VRLA,),
              "Battery University BU-806a (30 months at 41 °C)",
              "VRLA float life at 41 °C (10 years at 25 °C; hot end)", 2.5, (2.25, 3.31), "years", 2,
              "band: the 8-10 K step of practice, less 10 %"),
    Reference("vendor-booklet/service-life-table/30C-over-25C", "validation", (VRLA,),
              "vendor service-life table for shallow cycling and float (10 / 7 / 5 years at "
              "20 / 25 / 30 °C: x0.71 per 5 K, research note on aging models §4.1)",
              "VRLA float life at 25 °C / at 30 °C", 1.41, (1.3, 1.65), "ratio", 2,
              "band: the 8-10 K step of practice"),
    Reference("powerstride/deep-cycle/50pct-over-80pct", "validation", (VRLA,),
              "flooded deep-cycle battery read-off: 225 cycles at 80 % depth, 750 at 50 % "
              "(research note on aging models §4.2; another lead-acid design)",
              "lead-acid cycles at 50 % depth / at 80 % depth", 3.33, _x2(3.33), "ratio", 2,
              "band: within a factor of 2 (flooded, not AGM)"),
    # ---------------------------------------------------------------- LTO
    Reference("common-practice/lto/20000-cycles", "calibration", (LTO,),
              "common practice: LTO about 20,000 full cycles to 80 % at 25 °C",
              "LTO back-to-back full cycles, 25 °C: cycles to 80 %", 20000.0, (13333.0, 30000.0),
              "cycles", 0),
    Reference("bank2020/fitted-model/45C-dod100-1C-5000efc", "validation", (LTO,),
              BANK + ": the cycling term (1.29 + 7.83e-5 C + 4.02 DOD^3) exp(-8.33 x "
              "318.15/T) EFC^0.526 = 11.3 % less the model's calendar gain over the 417 days "
              "(0.7 %)",
              "LTO cycled back to back, full depth, 1 C, 45 °C: capacity loss after 5,000 full "
              "cycles, calendar fade included (warm, cycling)", 0.1056, _x2(0.1056), "fraction",
              4, CROSS_CELL),
    Reference("bank2020/fitted-model/storage-45C-full-1y", "validation", (LTO,),
              BANK + ": no net calendar loss at 45 °C (the model gives a gain of 1.1 % and a "
              "loss under 0.01 %)",
              "LTO stored full at 45 °C for 1 year: capacity loss (warm)", None, (0.0, 0.02),
              "fraction", 4, "band: no loss to 2 % (the fit's author finds almost no calendar "
              "aging below 80 °C; the default's linear law is the conservative end)"),
    Reference("ghost/h2020-news/9000-cycles-80dod", "validation", (LTO,),
              "H2020 GHOST project: 10 % loss after more than 9,000 cycles at 80 % depth, 25 °C",
              "LTO cycled back to back at 80 % depth, 25 °C: loss after 9,000 cycles", 0.10,
              _x2(0.10), "fraction", 3, CROSS_CELL),
    # ---------------------------------------------------------------- primary lithium
    Reference("vendor/self-discharge/lisocl2-20C", "calibration", (PRIMARY,),
              "vendor statements: Li-SOCl2 bobbin cells lose about 1 %/yr at room temperature",
              "Li-SOCl2 self-discharge at 20 °C", 0.01, (0.009, 0.011), "fraction/year", 4),
    Reference("vendor/self-discharge/lisocl2-70C", "calibration", (PRIMARY,),
              "vendor figures for bobbin cells stored at 55-70 °C: a few %/yr (from memory)",
              "Li-SOCl2 self-discharge at 70 °C", 0.03, (0.015, 0.05), "fraction/year", 4),
    # ---------------------------------------------------------------- standards
    Reference("astm-e1049/fig6/count", "standard", (),
              "ASTM E1049-85 (2017), Fig. 6 example, rainflow table",
              "history -2, 1, -3, 5, -1, 3, -4, 4, -2: cycles counted", 4.0, (3.9999, 4.0001),
              "cycles", 2),
    Reference("astm-e1049/fig6/range-sum", "standard", (),
              "ASTM E1049-85 (2017), Fig. 6 example (same table)",
              "same history: sum of count x range", 23.0, (22.9999, 23.0001), "units", 2),
    Reference("nist-hb135/app-d/spv-3pct-10y", "standard", (),
              "NIST Handbook 135 (Fuller & Petersen 1996), App. D, SPV eq. D.2.1.1",
              "single present value, 3 %, 10 years", 0.744094, (0.7440935, 0.7440945),
              "factor", 6),
    Reference("nist-hb135/app-d/upv-3pct-20y", "standard", (),
              "NIST Handbook 135, App. D, UPV", "uniform present value, 3 %, 20 years",
              14.877475, (14.8774745, 14.8774755), "factor", 6),
    Reference("ieee1013/sizing-chain/worked-example", "standard", (),
              "IEEE 1013 / IEEE 1562 sizing chain, worked by hand (research note "
              "sizing-economics 1.6)",
              "960 Wh/day, 12 V, 5 days, DOD 0.8, K_T 1.30, aging 1.25, margin 1.10: capacity",
              893.75, (893.7499, 893.7501), "Ah", 2),
    Reference("ieee485/table1/0C", "standard", (),
              "IEEE 485 Table 1 (from memory; 60/50/40 °F rows confirmed by practitioner "
              "tables), interpolated", "lead-acid temperature factor at 0 °C", 1.398,
              (1.397, 1.399), "factor", 3),
)

#: The row keys each aging set was fitted to (its calibration targets).
_NAUMANN_CYCLE = {"naumann2020/cycle-model/1C-doc100-1000fec",
                  "schimpe2018/table4/plating-share-1C-25C",
                  "schimpe2018/table4/charge-at-0C-over-25C"}
_NAUMANN_CYCLE_AND_HEAT = {*_NAUMANN_CYCLE, "wang2011/eq5/c2-life-ratio-45C-over-25C"}
_SCHMALSTIEG = {"schmalstieg2014/alpha-cap/4.1V-25C-365d", "schmalstieg2014/alpha-cap/4.1V-35C-365d",
                "schmalstieg2014/beta-cap/3.667V-dod100-1000ah"}
_SIDE_BY_SIDE_25C = "gasper2023/calendar-models/soc100-25C-1y-nmc-over-lfp"
FITTED_TARGETS = {
    LFP: frozenset({"gasper2023/calendar-models/soc100-25C-1y-lfp",
                    "gasper2023/calendar-models/soc100-45C-1y-lfp",
                    "gasper2023/calendar-models/soc100-10C-1y-lfp",
                    "gasper2023/calendar-models/soc50-25C-1y-lfp",
                    "gasper2023/calendar-models/soc100-25C-1.5y-lfp",
                    "naumann2018/calendar-model/0C-over-10C-soc100-1y",
                    _SIDE_BY_SIDE_25C, *_NAUMANN_CYCLE}),
    LFP_ONE_POINT: frozenset({"gasper2023/calendar-models/soc100-25C-1y-lfp", _SIDE_BY_SIDE_25C,
                              *_NAUMANN_CYCLE_AND_HEAT}),
    LFP_SMALL_CELL: frozenset({"naumann2018/calendar-model/25C-soc50-1y",
                               "naumann2018/calendar-model/25C-soc100-1y",
                               *_NAUMANN_CYCLE_AND_HEAT}),
    NMC: frozenset({"gasper2023/calendar-models/soc100-25C-1y-nmc",
                    "gasper2023/calendar-models/soc100-45C-1y-nmc",
                    "gasper2023/calendar-models/soc100-10C-1y-nmc",
                    "gasper2023/calendar-models/soc50-25C-1y-nmc",
                    "gasper2023/calendar-models/soc100-25C-1.5y-nmc",
                    "smith2017/calendar-model/0C-over-10C-soc100-1y",
                    _SIDE_BY_SIDE_25C,
                    "common-practice/stationary-nmc/5000-cycles-80dod",
                    "schmalstieg2014/beta-cap/3.667V-dod100-1000ah"}),
    NMC_ONE_POINT: frozenset({"gasper2023/calendar-models/soc100-25C-1y-nmc", _SIDE_BY_SIDE_25C,
                              "smith2017/calendar-model/life-ratio-5C-over-25C",
                              "common-practice/stationary-nmc/5000-cycles-80dod",
                              "schmalstieg2014/beta-cap/3.667V-dod100-1000ah"}),
    NMC_SMALL_CELL: frozenset({"common-practice/stationary-nmc/5000-cycles-80dod", *_SCHMALSTIEG}),
    NMC_WARRANTY: frozenset({
        "common-practice/stationary-nmc/5000-cycles-80dod",
        "common-practice/stationary-nmc/warranty-70pct-10y", *_SCHMALSTIEG}),
    VRLA: frozenset({"agm-datasheets/woehler/50pct", "agm-datasheets/woehler/30pct"}),
    LTO: frozenset({"common-practice/lto/20000-cycles"}),
    PRIMARY: frozenset({"vendor/self-discharge/lisocl2-20C", "vendor/self-discharge/lisocl2-70C"}),
}

#: Perturbations no honest validation row rejects, and why (the report lists them).
KNOWN_GAPS = {
    (LFP, "cold storage activation energy x2"):
        "no independent LFP storage data below 10 °C could be read offline (the slope below "
        "the large-format cell's coldest test is Naumann et al. 2018's, a calibration row)",
    (NMC, "cold storage activation energy x2"):
        "no independent NMC storage data below 10 °C could be read offline besides the study "
        "the cold slope comes from (Smith et al. 2017, a calibration row)",
    (NMC, "calendar activation energy -30 %"):
        "the independent NMC storage rows (Smith et al. 2017's Kokam cell, 35 kJ/mol; the "
        "trade's halving per 10 K) lie between the default's heat law (about 54 kJ/mol "
        "stored full at 25 °C) and one 30 % milder, so neither rejects it; the large-format "
        "cells' own data at 10, 25 and 45 °C (calibration rows) are what set it",
    (LFP, "calendar time exponent +20 %"):
        "a steeper time law within the tests shortens the lives past them towards the "
        "trade's figures (stored full at 25 °C: about 21 years instead of 26), which the "
        "trade rows cannot reject; no independent LFP storage data longer than the "
        "large-format cell's could be read offline",
    (NMC, "calendar time exponent +20 %"):
        "a steeper time law within the tests shortens the lives past them; no independent "
        "NMC storage data longer than the large-format cells' could be read offline, and "
        "the stationary-cycling floor (1,500 daily cycles) is still met",
    (VRLA, "woehler_exponent +20 %"):
        "the only independent cycling figure is of a flooded battery (factor-2 band)",
    (LTO, "calendar activation energy -30 %"):
        "the one LTO storage row (Bank et al. 2020) bounds the loss from above only: its cells "
        "lose almost nothing, so a milder heat law stays within it",
    (LTO, "sign of the calendar activation energy"):
        "the one LTO storage row (Bank et al. 2020) bounds the loss from above only",
}

#: What the report says where independent data could not be found offline.
NO_INDEPENDENT_DATA = {
    LFP: "no independent data of LFP cycled cold could be read offline (Schimpe et al. "
         "2018's cold tests are what the plating term is fitted to): the cold cycling row is "
         "an inference from the charge-current limit of practice; no LFP storage data below "
         "10 °C besides the study the cold slope comes from; no storage data longer than "
         "about 1.5 years of a large-format cell: past it the law's rule (the rate reached "
         "there, kept) is checked only against the trade's figures",
    NMC: "no independent NMC storage data below 10 °C could be read offline: the slope below "
         "the large-format cells' coldest test comes from one study of a large NMC cell "
         "stored down to 0 °C (Smith et al. 2017), which is its calibration row; colder than "
         "0 °C the rate falls no further; no storage data longer than about 1.5 years of "
         "those cells",
    LTO: "the level of the LTO laws rests on figures of practice (20,000 cycles to 80 %, "
         "common practice; 0.5 % a year stored at 25 °C, from memory); two independent "
         "studies check them (H2020 GHOST at 25 °C; Bank et al. 2020 at 45 °C through the "
         "fitted model, where the default's calendar fade is the conservative end: those "
         "cells lose almost nothing stored below 80 °C); no LTO data below 25 °C could be read "
         "offline",
    PRIMARY: "no independent data: the only figures found offline (vendor statements) are "
             "what the self-discharge curve is fitted to",
}

#: Where a default set departs from a fact of the trade, and why it is left so (the
#: report lists them): the alternative that meets the figure is named.
DEPARTURES = {
    LFP: "stored full, the default reaches 80 % after about 26 years at 25 °C and 7 at 45 °C, "
         "where the trade says 15 and 3: within the check bands, at their long end. Its "
         "calendar law is that of a large-format stationary cell measured in one test matrix "
         "with the NMC cells (Gasper et al. 2023: 1.7 % a year stored full at 25 °C, 5.5 % at "
         "45 °C), carried past the cell's storage tests at the rate they end on; the trade's "
         "figures are rules of thumb for whole products, and the plan prices what else ends "
         "a product apart (component lives: electronics 20 years at 25 °C, halving per 10 K; "
         "seals), which ends such packs first. The set published keeps Naumann et al. "
         "2018's small-cell level (8.7 and 2.0 years)",
}
