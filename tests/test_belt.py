"""The belt simulation: residence under a piecewise-constant speed profile.

Every expected time below is worked out by hand from distance = speed x time
on a rigid belt (no source needed: it is the definition of a conveyor).
"""

from __future__ import annotations

import math

import pytest

from optimizer.planning.belt import Belt, SpeedProfile, residence


def test_profile_travel_and_advance_by_hand():
    p = SpeedProfile((0.0, 10.0, 30.0), (1.0, 0.5, 2.0))
    assert p.travel(0.0, 10.0) == pytest.approx(10.0)
    assert p.travel(5.0, 40.0) == pytest.approx(5.0 + 10.0 + 20.0)
    # 24 m from t=0: 10 m by t=10, 10 m more by t=30, last 4 m at 2 m/min
    assert p.advance(0.0, 24.0) == pytest.approx(32.0)
    assert residence(p, 0.0, 24.0) == pytest.approx(32.0)
    assert p.speed_at(29.9) == 0.5
    assert p.pieces(5.0, 35.0) == [(5.0, 10.0, 1.0), (10.0, 30.0, 0.5), (30.0, 35.0, 2.0)]


def test_single_feed_runs_at_its_limit():
    # 12 kg at 1 kg per metre = 12 m of belt at 0.2 m/min -> 60 min on; last piece
    # then needs 24 m / 0.2 = 120 min more
    b, end = Belt.empty(24.0, 2.0).with_feed(0.0, 12.0, 1.0, 0.2)
    assert end == pytest.approx(60.0)
    assert b.exits == pytest.approx((180.0,))
    assert b.profile.speed_at(100.0) == pytest.approx(0.2)


def test_speed_up_waits_for_the_slow_pieces():
    b = Belt.empty(24.0, 2.0)
    b, _ = b.with_feed(0.0, 12.0, 1.0, 0.2)
    # a product allowing 1 m/min goes on at 70 min: the belt stays at 0.2 m/min
    # until the slow feed's last piece leaves at 180 min (22 m moved by then),
    # then the last 2 m of the 24 kg go on at 1 m/min: end 182 min, exit 206 min
    b, end = b.with_feed(70.0, 24.0, 1.0, 1.0)
    assert end == pytest.approx(182.0)
    assert b.exits == pytest.approx((180.0, 206.0))
    assert b.profile.times == pytest.approx((0.0, 180.0))
    assert b.profile.speeds == pytest.approx((0.2, 1.0))
    # the first slow piece keeps its full 120 min; a fast piece entering at 70 min
    # stays until 182 min
    assert residence(b.profile, 0.0, 24.0) == pytest.approx(120.0)
    assert residence(b.profile, 70.0, 24.0) == pytest.approx(112.0)


def test_slow_down_is_immediate_and_keeps_earlier_pieces_longer():
    b = Belt.empty(10.0, 2.0)
    b, end1 = b.with_feed(0.0, 5.0, 1.0, 1.0)  # 5 min on at 1 m/min, exit would be 15
    b, end2 = b.with_feed(5.0, 1.0, 1.0, 0.5)  # slows to 0.5 at 5 min
    assert (end1, end2) == pytest.approx((5.0, 7.0))
    # first feed's last piece entered at 5 min: 10 m at 0.5 m/min -> leaves at 25
    assert b.exits == pytest.approx((25.0, 27.0))
    assert residence(b.profile, 0.0, 10.0) == pytest.approx(15.0)  # 5 m by 5, 5 m by 15


def test_top_speed_clamps_the_limit():
    b, end = Belt.empty(10.0, 0.5).with_feed(0.0, 10.0, 2.0, 5.0)
    assert end == pytest.approx(10.0)  # 5 m at 0.5 m/min
    assert b.exits == pytest.approx((30.0,))


def test_feeds_must_come_in_time_order():
    b, _ = Belt.empty(10.0, 1.0).with_feed(0.0, 5.0, 1.0, 1.0)
    with pytest.raises(ValueError, match="before the last feed"):
        b.with_feed(2.0, 1.0, 1.0, 1.0)
    assert math.isinf(-Belt.empty(1.0, 1.0).empty_at)
