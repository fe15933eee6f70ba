"""The schedule records and their one-table form (schedule.csv columns)."""

from __future__ import annotations

import pytest

from optimizer.planning.schedule import (
    SCHEDULE_COLUMNS,
    BeltPiece,
    Changeover,
    Feed,
    Schedule,
    SettingSpan,
    ShiftSchedule,
    Stop,
    TimedBatch,
    TraysOf,
    TunnelTimeline,
    schedule_table,
)


def _one_shift() -> Schedule:
    batch = TimedBatch(
        "s1",
        "oven",
        "s1/oven/01",
        "oven|hot|A:2",
        "hot",
        0.0,
        5.0,
        55.0,
        60.0,
        (TraysOf("A", 2, 20.0),),
    )
    feed = Feed(
        "s1",
        "tun",
        "s1/oven/01",
        "A",
        "oven",
        "hot",
        "cold",
        "full",
        60.0,
        80.0,
        20.0,
        2,
        30.0,
        110.0,
    )
    tl = TunnelTimeline(
        "s1",
        "tun",
        10.0,
        (BeltPiece(0.0, 60.0, 1.0 / 3.0), BeltPiece(60.0, 110.0, 1.0 / 3.0)),
        (SettingSpan(0.0, 120.0, "cold"),),
        (feed,),
    )
    return Schedule(
        (
            ShiftSchedule(
                "s1",
                120.0,
                (batch,),
                (Changeover("s1", "oven", 60.0, 70.0, "hot", "warm"),),
                (Stop("s1", "tun", 110.0, 120.0, "wash"),),
                (tl,),
            ),
        )
    )


def test_table_has_the_agreed_columns_and_one_row_per_item():
    df = schedule_table(_one_shift())
    assert tuple(df.columns) == SCHEDULE_COLUMNS
    assert sorted(df["kind"]) == ["batch", "belt", "belt", "changeover", "feed", "stop"]
    feed = df[df["kind"] == "feed"].iloc[0]
    assert feed["batch"] == "s1/oven/01"
    assert feed["kg"] == pytest.approx(20.0)
    assert feed["belt_speed_m_per_min"] == pytest.approx(1.0 / 3.0)
    batch = df[df["kind"] == "batch"].iloc[0]
    assert (batch["start_min"], batch["end_min"]) == (0.0, 60.0)
    assert batch["trays"] == "2"


def test_schedule_totals():
    s = _one_shift()
    assert s.total_kg == pytest.approx(20.0)
    assert s.kg_by_product() == {"A": pytest.approx(20.0)}
    assert s.shifts[0].tunnels[0].speed_at(70.0) == pytest.approx(1.0 / 3.0)
