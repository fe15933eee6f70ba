"""Lethality against published time-temperature tables.

Sources (data in tests/sources):
- USDA FSIS (1999), Appendix A, time-temperature table for cooked beef, roast
  beef and cooked corned beef, 6.5-log10 and 7-log10 Salmonella columns.
- US FDA Food Code 2022, 3-401.11(A)(2) cooking chart.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from thermal import lethality as L
from thermal.rules import CookRule, LethalityRule, TimeTemperatureTable

SOURCES = Path(__file__).parent / "sources"
FSIS = pd.read_csv(SOURCES / "fsis_appendix_a_1999_salmonella.csv", comment="#")
FDA = pd.read_csv(SOURCES / "fda_food_code_2022_3-401.11.csv", comment="#")

COLUMNS = [("hold_6_5_log_s", 6.5), ("hold_7_log_s", 7.0)]


def _rows(col):
    """Rows on the D/z line: positive holds, without the 62.8 °C row that FSIS
    raised from 'instantly' to 4 min (table footnote)."""
    m = (FSIS[col] > 0) & (FSIS.temp_c != 62.8)
    return FSIS.temp_c[m].to_numpy(), FSIS[col][m].to_numpy(float), FSIS.printed_unit[m].to_numpy()


@pytest.mark.parametrize(
    ("col", "logs", "tol"), [("hold_6_5_log_s", 6.5, 0.13), ("hold_7_log_s", 7.0, 0.08)]
)
def test_fsis_two_point_organism_reproduces_every_row(col, logs, tol):
    # Source: USDA FSIS (1999) Appendix A. Organism parameters from the end
    # rows (54.4 °C and 69.4 °C); an isothermal hold at each row's temperature
    # for its printed time must deliver the column's log reduction. The table
    # is not exactly one D/z line: measured worst deviation 12.6 % (6.5-log)
    # and 7.4 % (7-log) of the log reduction, hence the tolerances.
    temps, holds, _ = _rows(col)
    org = LethalityRule.from_two_points(
        "Salmonella", (temps[0], holds[0]), (temps[-1], holds[-1]), logs
    )
    assert org.z == pytest.approx(5.59, abs=0.01)  # about 10 °F
    t = np.array([0.0, 1.0])
    hist_t = t[None, :] * holds[:, None]
    hist_y = np.repeat(temps[:, None], 2, axis=1)
    got = L.log_reduction(hist_t, hist_y, org.d_ref, org.t_ref, org.z)
    np.testing.assert_allclose(got, logs, rtol=tol)
    assert got[0] == pytest.approx(logs, rel=1e-12)
    assert got[-1] == pytest.approx(logs, rel=1e-12)


@pytest.mark.parametrize(
    ("col", "logs", "tol"), [("hold_6_5_log_s", 6.5, 0.09), ("hold_7_log_s", 7.0, 0.055)]
)
def test_fsis_least_squares_line_reproduces_every_row(col, logs, tol):
    # Source: USDA FSIS (1999) Appendix A. A least-squares D/z line through all
    # rows (log10 time against °C). Measured: z = 5.55 K (6.5-log) and 5.56 K
    # (7-log), about 10 °F; worst row 8.9 % (6.5-log) and 5.2 % (7-log) off
    # the line. The hold the library finds for the column's reduction at each
    # row temperature (time_to_f_value, exact inversion) must match the line
    # and so the printed rows to those tolerances.
    temps, holds, _ = _rows(col)
    slope, icpt = np.polyfit(temps, np.log10(holds), 1)
    z = -1.0 / slope
    assert z == pytest.approx(5.555, abs=0.01)
    org = LethalityRule("Salmonella", 10**icpt / logs, 0.0, z, logs)
    need = L.time_to_f_value(
        np.array([0.0, 1e6]), np.repeat(temps[:, None], 2, axis=1), org.required_f, org.t_ref, org.z
    )
    np.testing.assert_allclose(need, 10 ** np.polyval([slope, icpt], temps), rtol=1e-9)
    np.testing.assert_allclose(need, holds, rtol=tol)


def test_fsis_table_as_a_rule_matches_rows_and_instant_entries():
    # Source: USDA FSIS (1999) Appendix A, 6.5-log10 column, used directly as
    # a time-temperature table.
    tab = TimeTemperatureTable(
        "FSIS Appendix A 6.5-log10", tuple(FSIS.temp_c), tuple(FSIS.hold_6_5_log_s.astype(float))
    )
    np.testing.assert_allclose(tab.required_hold(FSIS.temp_c), FSIS.hold_6_5_log_s)
    # Between 69.4 °C (14 s) and the instant 70.0 °C row no credit is given.
    assert tab.required_hold(69.9) == 14.0
    rule = CookRule(54.4, table=tab)
    # Come-up in 20 min, hold at 60.0 °C for 12 min (table row), cool.
    t = np.array([0.0, 1200.0, 1200.0 + 725.0, 2400.0])
    y = np.array([5.0, 60.0, 60.0, 20.0])
    assert rule.check(t, y).met
    t_short = np.array([0.0, 1200.0, 1800.0, 1900.0])
    v = rule.check(t_short, y)
    assert not v.met and v.binding == "table"


def _plateau(level, dwell):
    return np.array([0.0, 600.0, 600.0 + dwell, 660.0 + dwell]), np.array(
        [20.0, level, level, 20.0]
    )


def test_fda_2022_chart_as_a_rule():
    # Source: US FDA Food Code 2022, 3-401.11(A)(2): 63 °C 3 min, 66 °C 1 min,
    # 68 °C 17 s, 70 °C < 1 s (instantaneous, entered as 0 s).
    rows = FDA.sort_values("temp_c")
    tab = TimeTemperatureTable(
        "FDA Food Code 2022 3-401.11", tuple(rows.temp_c), tuple(rows.hold_s)
    )
    for temp, hold in zip(rows.temp_c, rows.hold_s, strict=True):
        assert tab.check(*_plateau(temp, hold + 0.5)).met
        if hold > 0:
            assert not tab.check(*_plateau(temp, 0.9 * hold)).met
    # 17 s at 68 °C also meets the chart when the core only ever reaches 68 °C
    assert CookRule(68.0, hold=17.0, table=tab).check(*_plateau(68.0, 17.5)).met
    # Between rows, log-time interpolation (hand): 180 (60/180)**0.5 at 64.5 °C
    assert tab.required_hold(64.5) == pytest.approx(180 * (60 / 180) ** 0.5)
