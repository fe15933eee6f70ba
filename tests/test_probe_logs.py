"""Reading data-logger CSV files: every quirk the reader accepts, and bad files."""

from __future__ import annotations

from datetime import datetime

import numpy as np
import pytest

from optimizer.probes.logs import LogFileError, read_log


def _write(tmp_path, text: str, name: str = "run.csv", encoding: str = "utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def test_plain_elapsed_minutes_and_roles_from_header(tmp_path):
    path = _write(
        tmp_path,
        "time [min],core 1,core 2,surface,air\n0,4.0,5.0,6.0,180.0\n1,4.5,5.5,30.0,181\n"
        "2,5.5,6.5,50.0,179.5\n",
    )
    log = read_log(path)
    assert log.times.tolist() == [0.0, 60.0, 120.0]
    assert [c.name for c in log.cores] == ["core 1", "core 2"]
    assert [c.name for c in log.surfaces] == ["surface"]
    assert log.air is not None and log.air.name == "air"
    assert log.channel("core 2").values.tolist() == [5.0, 5.5, 6.5]
    assert log.notes == ()
    assert log.started is None
    assert len(log.sha256) == 64


def test_decimal_comma_semicolon_fahrenheit_dates_preamble(tmp_path):
    text = (
        "Logger XY-12; serial 4471\n"
        "Date/Time;Core [°F];Air [°F]\n"
        "14.03.2026 06:30:00;41,0;320,0\n"
        "14.03.2026 06:30:30;42,8;321,8\n"
        "14.03.2026 06:31:00;50,0;323,6\n"
    )
    log = read_log(_write(tmp_path, text, encoding="cp1252"))
    assert log.started == datetime(2026, 3, 14, 6, 30)
    assert log.times.tolist() == [0.0, 30.0, 60.0]
    # 41 °F = 5 °C; 50 °F = 10 °C; 320 °F = 160 °C (exact conversions)
    assert log.cores[0].values == pytest.approx([5.0, 6.0, 10.0])
    assert log.air.values == pytest.approx([160.0, 161.0, 162.0])
    assert log.cores[0].unit == "degF"


def test_iso_and_tab_separated_with_kelvin_option(tmp_path):
    text = (
        "timestamp\tT1\tT2\n"
        "2026-03-14T23:59:30\t278.15\t300.15\n"
        "2026-03-15T00:00:30\t279.15\t301.15\n"
        "2026-03-15T00:01:30\t280.15\t302.15\n"
    )
    log = read_log(_write(tmp_path, text), core=["T1"], air="T2", temperature_unit="K")
    assert log.times.tolist() == [0.0, 60.0, 120.0]
    assert log.cores[0].values == pytest.approx([5.0, 6.0, 7.0])
    assert log.air.values == pytest.approx([27.0, 28.0, 29.0])


def test_clock_times_roll_over_midnight(tmp_path):
    text = "time,core,air\n23:59:00,5,2\n23:59:30,5.5,2\n00:00:00,6,2\n00:00:30,6.5,2\n"
    log = read_log(_write(tmp_path, text))
    assert log.times.tolist() == [0.0, 30.0, 60.0, 90.0]
    assert [n.kind for n in log.notes] == ["midnight"]


def test_missing_readings_are_noted_not_filled(tmp_path):
    text = "elapsed [s],core,air\n0,5,180\n30,,180\n60,NaN,181\n90,OL,181\n120,---,182\n150,7,182\n"
    log = read_log(_write(tmp_path, text))
    core = log.cores[0].values
    assert np.isnan(core[1:5]).all()
    assert core[[0, 5]].tolist() == [5.0, 7.0]
    (note,) = [n for n in log.notes if n.kind == "missing"]
    assert note.count == 4 and note.line == 3 and note.channel == "core"


def test_out_of_range_readings_are_dropped_and_noted(tmp_path):
    text = "time [s],core,air\n0,5,180\n30,-999,180\n60,3276.7,181\n90,6,181\n"
    log = read_log(_write(tmp_path, text))
    assert np.isnan(log.cores[0].values[1:3]).all()
    (note,) = [n for n in log.notes if n.kind == "out_of_range"]
    assert note.count == 2 and note.line == 3


def test_duplicated_and_out_of_order_timestamps(tmp_path):
    text = (
        "time [s],core,air\n0,5,180\n30,5.5,180\n30,5.5,180\n90,7,181\n60,6,181\n"
        "60,6.4,181\n120,8,182\n"
    )
    log = read_log(_write(tmp_path, text))
    assert log.times.tolist() == [0.0, 30.0, 60.0, 90.0, 120.0]
    # out-of-order rows are sorted; of two rows at 60 s the first in the file is kept
    assert log.cores[0].values.tolist() == [5.0, 5.5, 6.0, 7.0, 8.0]
    assert log.lines.tolist() == [2, 3, 6, 5, 8]
    kinds = {n.kind: n for n in log.notes}
    assert kinds["out_of_order"].line == 6
    assert kinds["duplicate"].count == 2
    assert "with other readings" in kinds["duplicate"].message


def test_gap_is_noted(tmp_path):
    rows = [f"{t},{5 + t / 100},{180}" for t in (0, 30, 60, 90, 400, 430)]
    log = read_log(_write(tmp_path, "time [s],core,air\n" + "\n".join(rows) + "\n"))
    (gap,) = [n for n in log.notes if n.kind == "gap"]
    assert gap.line == 6
    assert "5.2 min" in gap.message


def test_pulled_probe_is_flagged_and_later_readings_unused(tmp_path):
    core = [5, 8, 11, 14, 17, 20, 178.5, 179.0, 179.4]
    rows = [f"{30 * i},{c},180" for i, c in enumerate(core)]
    log = read_log(_write(tmp_path, "time [s],core,air\n" + "\n".join(rows) + "\n"))
    ch = log.cores[0]
    assert ch.pulled_at == 180.0
    assert np.isfinite(ch.values[:6]).all() and np.isnan(ch.values[6:]).all()
    (note,) = [n for n in log.notes if n.kind == "pulled"]
    assert note.line == 8


def test_steady_approach_to_air_is_not_a_pulled_probe(tmp_path):
    # a core that comes close to the air by heating (small steps) is not pulled
    core = 180 - 175 * np.exp(-np.arange(40) / 6.0)
    rows = [f"{30 * i},{c:.2f},180" for i, c in enumerate(core)]
    log = read_log(_write(tmp_path, "time [s],core,air\n" + "\n".join(rows) + "\n"))
    assert log.cores[0].pulled_at is None
    assert np.isfinite(log.cores[0].values).all()


def test_unrecognised_columns_are_noted(tmp_path):
    text = "time [s],core,air,battery\n0,5,180,3.6\n30,6,180,3.6\n60,7,180,3.6\n"
    log = read_log(_write(tmp_path, text))
    assert [n.kind for n in log.notes] == ["ignored_column"]
    assert "battery" in log.notes[0].message


@pytest.mark.parametrize(
    ("text", "options", "line", "column", "words"),
    [
        ("time [s],core,air\n0,5,180\n30,5x,180\n60,6,180\n", {}, 3, "core", "not a reading"),
        ("time [s],core,air\n0,5,180\n30,5,180,1\n60,6,180\n", {}, 3, None, "the header 3"),
        ("time,core,air\n0,5,180\n30,5,180\n60,6,180\n", {}, 2, "time", "need a unit"),
        ("time [s],core,air\n0,5,180\nabc,5,180\n60,6,180\n", {}, 3, "time", "elapsed time"),
        (
            "time,core,air\n2026-03-14 06:30,5,180\n2026-13-45 06:31,5,180\n"
            "2026-03-14 06:32,6,180\n",
            {},
            3,
            "time",
            "not a date",
        ),
        ("time [s],air\n0,180\n30,180\n60,180\n", {}, 1, None, "no core probe"),
        ("time [s],core,air\n0,5,180\n", {}, 1, None, "at least 3"),
        ("core,air\n5,180\n6,180\n7,180\n", {}, 1, None, "no header line"),
        ("time [s],core [psi],air\n0,5,180\n30,5,180\n60,6,180\n", {}, 1, "core", "psi"),
        ("time [s],core,air\n0,5,180\n30,5,180\n60,6,180\n", {"core": ["T9"]}, 1, "T9", "no such"),
        ("time [s],core,air\n0,,180\n30,-999,180\n60,,180\n", {}, 1, "core", "no usable"),
        ("time [s],core,core,air\n0,5,5,1\n30,5,5,1\n60,6,6,1\n", {}, 1, "core", "twice"),
        ("time [s],core,air\n0,5,180\n0,5,180\n0,6,180\n", {}, 2, "time", "same time"),
    ],
)
def test_bad_files_give_one_line_naming_file_line_and_column(
    tmp_path, text, options, line, column, words
):
    path = _write(tmp_path, text)
    with pytest.raises(LogFileError) as err:
        read_log(path, **options)
    msg = str(err.value)
    assert "\n" not in msg
    assert msg.startswith(f"{path}:{line}:")
    assert err.value.line == line and err.value.column == column
    if column is not None:
        assert f"column {column!r}" in msg
    assert words in msg


def test_unreadable_and_empty_files(tmp_path):
    with pytest.raises(LogFileError, match="not found"):
        read_log(tmp_path / "missing.csv")
    with pytest.raises(LogFileError, match="empty"):
        read_log(_write(tmp_path, "# only a comment\n\n"))
    with pytest.raises(LogFileError, match="not a text file"):
        read_log(_write(tmp_path, "time,core\x00\n"))
    with pytest.raises(LogFileError, match="a directory"):
        read_log(tmp_path)


def test_ambiguous_dates_across_days_need_the_order(tmp_path):
    text = "time,core,air\n03/04/2026 23:59,5,1\n04/04/2026 00:00,5,1\n04/04/2026 00:01,6,1\n"
    path = _write(tmp_path, text)
    with pytest.raises(LogFileError, match="give the date order"):
        read_log(path)
    log = read_log(path, date_order="dmy")
    assert log.times.tolist() == [0.0, 60.0, 120.0]
    assert log.started == datetime(2026, 4, 3, 23, 59)


def test_separate_date_and_time_columns_quoted_fields_and_oven_air(tmp_path):
    text = (
        'Date,Time,"Core, centre",Oven\n'
        '14/03/2026,06:30:00,"4,0",170\n'
        '14/03/2026,06:30:20,"4,5",171\n'
        '14/03/2026,06:30:40,"5,5",172\n'
    )
    log = read_log(_write(tmp_path, text))
    assert log.times.tolist() == [0.0, 20.0, 40.0]
    assert log.started == datetime(2026, 3, 14, 6, 30)
    assert log.cores[0].name == "Core, centre"
    assert log.cores[0].values.tolist() == [4.0, 4.5, 5.5]
    assert log.air.name == "Oven"
    assert log.notes == ()


def test_header_words_match_whole_words_only(tmp_path):
    # "lamb" is not "ambient", "T1 core" is a core probe
    text = "time [s],Lamb core,T1 core,air\n0,4,5,180\n30,5,6,180\n60,6,7,180\n"
    log = read_log(_write(tmp_path, text))
    assert [c.name for c in log.cores] == ["Lamb core", "T1 core"]
    assert log.air.name == "air"


def test_part_of_a_log_counts_time_from_its_first_reading(tmp_path):
    core = [5, 8, 11, 14, 17, 20, 178.5, 179.0, 179.4]
    rows = [f"2026-03-14 06:{30 + i}:00,{c},180" for i, c in enumerate(core)]
    log = read_log(_write(tmp_path, "time,core,air\n" + "\n".join(rows) + "\n"))
    part = log.part(120.0, 480.0)
    assert part.times.tolist() == [0.0, 60.0, 120.0, 180.0, 240.0, 300.0, 360.0]
    assert part.started == datetime(2026, 3, 14, 6, 32)
    assert part.cores[0].pulled_at == 240.0
    assert part.lines.tolist() == [4, 5, 6, 7, 8, 9, 10]
    with pytest.raises(ValueError, match="holds 1 readings"):
        log.part(0.0, 30.0)


def test_units_without_brackets_and_brackets_that_are_names(tmp_path):
    text = "Elapsed min;Core (oven 1) °F;core C;Air_degF\n0;41;5;320\n1;50;6;338\n2;59;7;356\n"
    log = read_log(_write(tmp_path, text))
    assert log.times.tolist() == [0.0, 60.0, 120.0]
    # "°F" after the name is a unit, "(oven 1)" is part of the name, "C" is a probe's name
    assert [c.name for c in log.cores] == ["Core (oven 1)", "core C"]
    assert log.cores[0].values == pytest.approx([5.0, 10.0, 15.0])
    assert log.cores[1].values.tolist() == [5.0, 6.0, 7.0]
    assert log.air.values == pytest.approx([160.0, 170.0, 180.0])


def test_without_an_air_channel_a_sudden_jump_is_noted_not_cut(tmp_path):
    core = [5, 8, 11, 14, 17, 20, 178.5, 179.0, 179.4]
    rows = [f"{30 * i},{c}" for i, c in enumerate(core)]
    log = read_log(_write(tmp_path, "time [s],core\n" + "\n".join(rows) + "\n"))
    assert log.cores[0].pulled_at is None
    assert np.isfinite(log.cores[0].values).all()
    (note,) = [n for n in log.notes if n.kind == "jump"]
    assert note.line == 8 and "no air channel" in note.message
