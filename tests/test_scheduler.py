"""The timed schedule on small plants checked by hand (exact start times).

Plants and plans are invented (tests/_schedule_cases.py). Each expected time
is worked out on paper from the rules in optimizer.planning.scheduler:
load, cook, unload; transfer; feed minutes = kg / (kg per m x belt speed);
last exit = feed end + residence at a constant speed.
"""

from __future__ import annotations

from dataclasses import replace

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from optimizer.planning.inputs import StopData
from optimizer.planning.scheduler import ScheduleOptions, schedule_plan
from tests._schedule_cases import line, plant, result, run
from tests._schedule_checker import problems


def _times(batch):
    return (batch.load_start, batch.cook_start, batch.cook_end, batch.unload_end)


def test_two_batches_one_oven_by_hand():
    inp = plant()
    # 2 batches of 4 trays of a (5 kg/tray): 40 kg; cook 30 min; route residence
    # 20 min on 10 m -> 0.5 m/min, 10 kg/m -> 5 kg/min, so a 20 kg batch feeds in 4 min
    res = result(
        inp,
        [line(inp, "s0", "ov", "s1", 2, 30.0, {"a": (4, 40.0)})],
        [run(inp, "s0", "a", "ov", "s1", 40.0, 20.0)],
    )
    s = schedule_plan(inp, res)
    sh = s.shifts[0]
    b1, b2 = sh.batches
    assert _times(b1) == pytest.approx((0.0, 4.0, 34.0, 36.0))
    assert _times(b2) == pytest.approx((36.0, 40.0, 70.0, 72.0))
    f1, f2 = sh.tunnels[0].feeds
    assert (f1.start, f1.end, f1.last_exit) == pytest.approx((38.0, 42.0, 62.0))
    assert (f2.start, f2.end, f2.last_exit) == pytest.approx((74.0, 78.0, 98.0))
    assert (f1.batch, f2.batch) == (b1.batch, b2.batch)
    assert [c.trays for c in b1.contents] == [4]
    assert s.total_kg == pytest.approx(40.0)
    assert sh.unplaced == ()
    assert {p.speed_m_per_min for p in sh.tunnels[0].belt} == {0.5}


def test_busy_belt_delays_the_second_oven_just_enough():
    # two ovens unload at 36 min; hot hold 7 min, transfer 2: oven a feeds 38-42;
    # oven b's feed can start at 42 and needs 4 min, so it must unload by 39:
    # its start moves from 0 to 3 min
    inp = plant(ovens=("oa", "ob"), hot_hold=7.0)
    res = result(
        inp,
        [
            line(inp, "s0", "oa", "s1", 1, 30.0, {"a": (4, 20.0)}),
            line(inp, "s0", "ob", "s1", 1, 30.0, {"a": (4, 20.0)}),
        ],
        [
            run(inp, "s0", "a", "oa", "s1", 20.0, 20.0),
            run(inp, "s0", "a", "ob", "s1", 20.0, 20.0),
        ],
    )
    sh = schedule_plan(inp, res).shifts[0]
    a, b = sh.batches
    assert (a.oven, b.oven) == ("oa", "ob")
    assert _times(a) == pytest.approx((0.0, 4.0, 34.0, 36.0))
    assert _times(b) == pytest.approx((3.0, 7.0, 37.0, 39.0))
    fa, fb = sh.tunnels[0].feeds
    assert (fa.start, fa.end) == pytest.approx((38.0, 42.0))
    assert (fb.start, fb.end) == pytest.approx((42.0, 46.0))
    assert fb.end - b.unload_end == pytest.approx(7.0)


def test_batch_too_big_for_the_hot_hold_window_is_cut_to_whole_trays():
    # 10 trays = 50 kg feed in 10 min at 5 kg/min; hot hold 8, transfer 2 leaves
    # 6 min = 30 kg = 6 trays; the other 4 trays (20 kg) are unplaced: hot hold
    inp = plant(hot_hold=8.0)
    res = result(
        inp,
        [line(inp, "s0", "ov", "s1", 1, 30.0, {"a": (10, 50.0)})],
        [run(inp, "s0", "a", "ov", "s1", 50.0, 20.0)],
    )
    sh = schedule_plan(inp, res).shifts[0]
    (b,) = sh.batches
    assert [(c.product, c.trays, c.kg) for c in b.contents] == [("a", 6, 30.0)]
    (f,) = sh.tunnels[0].feeds
    assert (f.start, f.end) == pytest.approx((38.0, 44.0))
    (u,) = sh.unplaced
    assert (u.rule, u.kg, u.machine) == ("hot_hold", pytest.approx(20.0), "ov")
    assert "6 trays per batch fit" in u.detail


def test_belt_must_clear_by_the_shift_end():
    # shift of 60 min: a batch unloads at 36, feeds 38-42 and its last piece would
    # leave at 62 > 60. Feeding must end by 60 - 20 = 40 min: 2 min x 5 kg/min =
    # 10 kg = 2 trays go; the other 2 trays (10 kg) are unplaced (shift end)
    inp = plant(shifts=(60.0,))
    res = result(
        inp,
        [line(inp, "s0", "ov", "s1", 1, 30.0, {"a": (4, 20.0)})],
        [run(inp, "s0", "a", "ov", "s1", 20.0, 20.0)],
    )
    sh = schedule_plan(inp, res).shifts[0]
    (b,) = sh.batches
    assert [c.trays for c in b.contents] == [2]
    (f,) = sh.tunnels[0].feeds
    assert (f.start, f.end, f.last_exit) == pytest.approx((38.0, 40.0, 60.0))
    (u,) = sh.unplaced
    assert (u.rule, u.kg) == ("shift_end", pytest.approx(10.0))


def test_back_to_back_carries_the_belt_into_the_next_shift():
    # same batch, two 60-min shifts back to back: the last piece leaves at 62,
    # i.e. 2 min into the next shift, which says it carried 20 kg x 2/20 in
    inp = plant(shifts=(60.0, 60.0), back_to_back=True)
    res = result(
        inp,
        [line(inp, "s0", "ov", "s1", 1, 30.0, {"a": (4, 20.0)})],
        [run(inp, "s0", "a", "ov", "s1", 20.0, 20.0)],
    )
    s = schedule_plan(inp, res)
    first, second = s.shifts
    (f,) = first.tunnels[0].feeds
    assert f.last_exit == pytest.approx(62.0)
    # at 60 min the belt has moved 9 m since the feed ended: the last 1 m (10 kg/m
    # x 1 m = 10 kg... of 2 m of feed) is still on: pieces that entered after 40 min
    assert first.tunnels[0].carried_out_kg == pytest.approx(10.0)
    assert second.tunnels[0].carried_in_kg == pytest.approx(10.0)
    assert s.back_to_back


def test_last_shift_always_clears_even_back_to_back():
    inp = plant(shifts=(60.0,), back_to_back=True)
    res = result(
        inp,
        [line(inp, "s0", "ov", "s1", 1, 30.0, {"a": (4, 20.0)})],
        [run(inp, "s0", "a", "ov", "s1", 20.0, 20.0)],
    )
    sh = schedule_plan(inp, res).shifts[0]
    (u,) = sh.unplaced
    assert (u.rule, u.kg) == ("shift_end", pytest.approx(10.0))
    assert sh.tunnels[0].feeds[0].last_exit == pytest.approx(60.0)


def test_fixed_stop_and_placed_stop_on_the_oven():
    # a stop of the oven fixed at 10-20 min: the batch (36 min cycle) cannot run
    # before it, so it loads at 20; a 5-min stop without a time goes at 0-5
    stops = (
        (
            StopData(10.0, "ov", "seal check", start=10.0),
            StopData(5.0, "ov", "wipe-down"),
        ),
    )
    inp = plant(stops=stops)
    res = result(
        inp,
        [line(inp, "s0", "ov", "s1", 1, 30.0, {"a": (4, 20.0)})],
        [run(inp, "s0", "a", "ov", "s1", 20.0, 20.0)],
    )
    sh = schedule_plan(inp, res).shifts[0]
    assert [(x.start, x.end, x.reason) for x in sh.stops] == [
        (0.0, 5.0, "wipe-down"),
        (10.0, 20.0, "seal check"),
    ]
    assert _times(sh.batches[0]) == pytest.approx((20.0, 24.0, 54.0, 56.0))


def test_setting_change_costs_the_oven_changeover():
    inp = plant(settings=("s1", "s2"), oven_changeover=12.0)
    res = result(
        inp,
        [
            line(inp, "s0", "ov", "s1", 1, 30.0, {"a": (4, 20.0)}),
            line(inp, "s0", "ov", "s2", 1, 30.0, {"a": (4, 20.0)}),
        ],
        [
            run(inp, "s0", "a", "ov", "s1", 20.0, 20.0),
            run(inp, "s0", "a", "ov", "s2", 20.0, 20.0),
        ],
    )
    sh = schedule_plan(inp, res).shifts[0]
    b1, b2 = sh.batches
    assert b2.load_start - b1.unload_end == pytest.approx(12.0)
    (c,) = [c for c in sh.changeovers if c.machine == "ov"]
    assert (c.start, c.end) == pytest.approx((36.0, 48.0))
    assert (c.before, c.after) == (b1.setting, b2.setting)
    assert b1.setting != b2.setting


def test_tunnel_setting_change_waits_for_an_empty_belt():
    # both routes need 50 min on 10 m (0.2 m/min, 2 kg/min): the first batch feeds
    # 38-48 and its last piece leaves at 98; the air may change only then, and the
    # 10-min changeover ends at 108. The second batch would unload at 72 and wait
    # 36 min: its 10-min feed (108-118) must end within 20 min of its unload, so
    # it unloads at 98 (start delayed from 36 to 62); exit 118 + 50 = 168
    inp = plant(tunnel_settings=("c1", "c2"), tunnel_changeover=10.0)
    res = result(
        inp,
        [line(inp, "s0", "ov", "s1", 2, 30.0, {"a": (4, 40.0)})],
        [
            run(inp, "s0", "a", "ov", "s1", 20.0, 50.0, tunnel_setting="c1"),
            run(inp, "s0", "a", "ov", "s1", 20.0, 50.0, tunnel_setting="c2"),
        ],
    )
    sh = schedule_plan(inp, res).shifts[0]
    _b1, b2 = sh.batches
    assert _times(b2) == pytest.approx((62.0, 66.0, 96.0, 98.0))
    f1, f2 = sh.tunnels[0].feeds
    assert (f1.start, f1.end, f1.last_exit) == pytest.approx((38.0, 48.0, 98.0))
    assert (f2.start, f2.end, f2.last_exit) == pytest.approx((108.0, 118.0, 168.0))
    (c,) = [c for c in sh.changeovers if c.machine == "tn"]
    assert (c.start, c.end) == pytest.approx((98.0, 108.0))
    spans = sh.tunnels[0].settings
    assert [(x.setting, x.start, x.end) for x in spans] == [
        (f1.tunnel_setting, 0.0, pytest.approx(98.0)),
        (f2.tunnel_setting, pytest.approx(108.0), 480.0),
    ]


def test_same_input_same_schedule():
    inp = plant(ovens=("oa", "ob"), hot_hold=7.0)
    res = result(
        inp,
        [line(inp, "s0", o, "s1", 3, 25.0, {"a": (5, 75.0)}) for o in ("oa", "ob")],
        [run(inp, "s0", "a", o, "s1", 75.0, 20.0) for o in ("oa", "ob")],
    )
    assert schedule_plan(inp, res) == schedule_plan(inp, res)
    assert schedule_plan(inp, res, options=ScheduleOptions(trials=1)).total_kg > 0
    with pytest.raises(ValueError, match="trials"):
        ScheduleOptions(trials=0)


# ------------------------------------------------------------------ independent checker


@st.composite
def _cases(draw):
    """A random small plant and a hand-written plan for it (batches and routes)."""
    n_ovens = draw(st.integers(1, 3))
    ovens = tuple(f"o{i}" for i in range(n_ovens))
    prods = {
        f"p{i}": (draw(st.sampled_from([2.0, 5.0, 6.5])), draw(st.sampled_from([8.0, 12.0, 20.0])))
        for i in range(draw(st.integers(1, 3)))
    }
    tunnels = ("tn", "tn2")[: draw(st.integers(1, 2))]
    n_shifts = draw(st.integers(1, 3))
    shift_min = tuple(draw(st.sampled_from([120.0, 240.0, 480.0])) for _ in range(n_shifts))
    transfer = draw(st.sampled_from([0.0, 2.0, 8.0]))
    hot_hold = transfer + draw(st.sampled_from([3.0, 10.0, 30.0, 200.0]))
    stops = tuple(
        tuple(
            draw(
                st.lists(
                    st.builds(
                        StopData,
                        st.sampled_from([5.0, 20.0]),
                        st.sampled_from([None, *ovens, *tunnels]),
                        st.just("stop"),
                        st.sampled_from([None, None, 30.0]),
                    ),
                    max_size=1,
                )
            )
        )
        for _ in shift_min
    )
    inp = plant(
        ovens=ovens,
        trays=draw(st.integers(4, 20)),
        load_min=draw(st.sampled_from([0.0, 3.0, 8.0])),
        unload_min=draw(st.sampled_from([0.0, 2.0])),
        oven_changeover=draw(st.sampled_from([0.0, 12.0])),
        length_m=draw(st.sampled_from([6.0, 24.0])),
        speeds=(0.02, draw(st.sampled_from([0.5, 2.0]))),
        transfer=transfer,
        hot_hold=hot_hold,
        tunnel_changeover=draw(st.sampled_from([0.0, 10.0])),
        products=prods,
        shifts=shift_min,
        stops=stops,
        back_to_back=draw(st.booleans()),
        settings=("s1", "s2"),
        tunnel_settings=("c1", "c2"),
        tunnels=tunnels,
    )
    oven_trays = inp.ovens[0].trays
    batches, runs = [], []
    for si, s in enumerate(inp.shifts):
        for o in ovens:
            for setting in draw(st.lists(st.sampled_from(["s1", "s2"]), max_size=2, unique=True)):
                names = draw(
                    st.lists(st.sampled_from(sorted(prods)), min_size=1, max_size=2, unique=True)
                )
                share = oven_trays // len(names)
                n = draw(st.integers(1, 4))
                contents = {}
                for p in sorted(names):
                    t = draw(st.integers(1, share))
                    kg = n * t * prods[p][0] * draw(st.sampled_from([1.0, 0.8, 0.55]))
                    contents[p] = (t, kg)
                cook = draw(st.sampled_from([5.0, 20.0, 45.0]))
                batches.append(line(inp, s.name, o, setting, n, cook, contents))
                for p, (_, kg) in contents.items():
                    res_min = [draw(st.sampled_from([3.0, 20.0, 60.0])) for _ in range(2)]
                    split = draw(st.sampled_from([1.0, 0.5, 0.0]))
                    where = [draw(st.sampled_from(tunnels)) for _ in range(2)]
                    for ts, part, rm, tn in (
                        ("c1", split, res_min[0], where[0]),
                        ("c2", 1 - split, res_min[1], where[1]),
                    ):
                        if part > 0:
                            runs.append(run(inp, s.name, p, o, setting, kg * part, rm, ts, tn))
        del si
    return inp, result(inp, batches, runs)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_cases(), st.sampled_from([1, 6]))
def test_random_plants_keep_every_rule(case, trials):
    inp, res = case
    s = schedule_plan(inp, res, options=ScheduleOptions(trials=trials))
    found = problems(inp, res, s)
    assert found == [], "\n".join(found[:10])


def _check(inp, res):
    s = schedule_plan(inp, res)
    assert problems(inp, res, s) == []
    return s


def test_checker_passes_the_hand_cases_and_catches_a_breach():
    inp = plant(ovens=("oa", "ob"), hot_hold=7.0)
    res = result(
        inp,
        [line(inp, "s0", o, "s1", 1, 30.0, {"a": (4, 20.0)}) for o in ("oa", "ob")],
        [run(inp, "s0", "a", o, "s1", 20.0, 20.0) for o in ("oa", "ob")],
    )
    s = _check(inp, res)
    # move oven b's batch 3 min earlier: its tray now waits 10 min > 7 min hot hold
    sh = s.shifts[0]
    b = sh.batches[1]
    early = replace(
        b,
        load_start=b.load_start - 3,
        cook_start=b.cook_start - 3,
        cook_end=b.cook_end - 3,
        unload_end=b.unload_end - 3,
    )
    bad = replace(s, shifts=(replace(sh, batches=(sh.batches[0], early)),))
    assert any("hot hold" in x for x in problems(inp, res, bad))
    # speed the belt up: residence falls below the required 20 min
    tl = sh.tunnels[0]
    fast = replace(tl, belt=tuple(replace(p, speed_m_per_min=1.0) for p in tl.belt))
    bad = replace(s, shifts=(replace(sh, tunnels=(fast,)),))
    found = problems(inp, res, bad)
    assert any("required" in x for x in found)
    assert any("belt took" in x for x in found)  # the feed kg no longer match the belt
