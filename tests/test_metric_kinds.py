"""explore/metric_kinds.py: each metric kind's value, event and wording.

The ratios below are hand-built (bounce heights over release height), so
every expected value is read off the table by eye.
"""
import numpy as np
import pytest

from conftest import ball_text
from hopscape.errors import InputError
from hopscape.metric_kinds import METRIC_KINDS, Outcome
from hopscape.study import Metric, parse_study

# three drops, three bounces each: rebound ratio of each bounce
RATIOS = np.array([
    [0.6, 1.3, 0.2],   # a later bounce beats the first and the release height
    [0.9, 0.4, 0.0],   # the first bounce is the highest; nothing beats release
    [1.1, 0.0, 0.0],   # one bounce only, above release
])


def test_outcome_reads_the_ratio_table():
    outcome = Outcome(RATIOS)
    assert outcome.best_later.tolist() == [1.3, 0.4, 0.0]
    assert outcome.of_bounce("first").tolist() == [0.6, 0.9, 1.1]
    assert outcome.of_bounce(3).tolist() == [0.2, 0.0, 0.0]
    assert outcome.beats_release.tolist() == [True, False, True]
    assert outcome.beats_first.tolist() == [True, False, False]


def test_one_bounce_has_no_later_bounce():
    assert Outcome(np.array([[1.4], [0.2]])).best_later.tolist() == [0.0, 0.0]


@pytest.mark.parametrize("kind, settings, value, event", [
    ("ratio", {"bounce": "later", "threshold": 1.0}, [1.3, 0.4, 0.0], [True, False, False]),
    ("ratio", {"bounce": "first", "threshold": 0.8}, [0.6, 0.9, 1.1], [False, True, True]),
    ("ratio", {"bounce": 2, "threshold": 0.3}, [1.3, 0.4, 0.0], [True, True, False]),
    ("beats_release", {}, [1.0, 0.0, 1.0], [True, False, True]),
    ("beats_first", {}, [1.0, 0.0, 0.0], [True, False, False]),
    # 1.3 / 0.6, 0.4 / 0.9, and 0 for a drop with no later bounce
    ("later_over_first", {"threshold": 1.0}, [1.3 / 0.6, 0.4 / 0.9, 0.0], [True, False, False]),
])
def test_each_kind_gives_its_value_and_event(kind, settings, value, event):
    metric = Metric(kind=kind, reference="centre", **settings)
    declared = METRIC_KINDS[kind]
    got = declared.value(Outcome(RATIOS), metric)
    assert got.tolist() == value
    assert declared.event(got, metric).tolist() == event


def test_flags_ignore_the_threshold():
    metric = Metric(kind="beats_release", reference="centre", threshold=5.0)
    value = METRIC_KINDS["beats_release"].value(Outcome(RATIOS), metric)
    assert METRIC_KINDS["beats_release"].event(value, metric).tolist() == [True, False, True]


def test_a_drop_inside_the_floor_is_never_an_event():
    metric = Metric(kind="ratio", reference="centre", threshold=1.0)
    assert METRIC_KINDS["ratio"].event(np.array([np.nan, 2.0]), metric).tolist() == [False, True]


def test_words_name_the_point_and_the_bounce():
    value, event = METRIC_KINDS["ratio"].words(Metric(kind="ratio", bounce=3, reference="bottom", threshold=1.5))
    assert "bounce 3" in value and "lowest point" in value
    assert event == "bounce 3 above 1.5 x the release height of the lowest point"
    assert "top point" in METRIC_KINDS["beats_first"].words(Metric(kind="beats_first", reference="top"))[1]


def test_the_study_schema_offers_exactly_the_declared_kinds():
    with pytest.raises(InputError) as caught:
        parse_study(ball_text(kind="highest"), "t.yaml")
    (message,) = caught.value.messages
    assert message.startswith("t.yaml:5:10: metric.kind: ")
    for name in METRIC_KINDS:
        assert repr(name) in message


def test_later_over_first_is_zero_without_a_first_bounce():
    # a drop that never rose again has no first bounce to compare with
    metric = Metric(kind="later_over_first", reference="centre")
    value = METRIC_KINDS["later_over_first"].value(Outcome(np.array([[0.0, 0.0]])), metric)
    assert value.tolist() == [0.0]


# --- clears: a height limit in metres ------------------------------------------

HEIGHTS = np.array([[0.004, 0.013, 0.002], [0.020, 0.009, 0.0]])  # [m] per bounce


def test_clears_compares_the_bounce_height_with_the_limit():
    outcome = Outcome(np.zeros_like(HEIGHTS), HEIGHTS)
    later = Metric(kind="clears", limit=0.012, reference="bottom")
    kind = METRIC_KINDS["clears"]
    assert kind.value(outcome, later).tolist() == [0.013, 0.009]
    assert kind.event(kind.value(outcome, later), later).tolist() == [True, False]
    first = Metric(kind="clears", limit=0.012, bounce="first", reference="bottom")
    assert kind.event(kind.value(outcome, first), first).tolist() == [False, True]
    assert kind.words(later)[1] == "the lowest point clears 12 mm in the best later bounce"


def test_clears_needs_a_limit_and_only_clears_takes_one():
    with pytest.raises(Exception, match="kind clears needs limit"):
        Metric(kind="clears", reference="centre")
    with pytest.raises(Exception, match="limit is used only by kind clears"):
        Metric(kind="ratio", reference="centre", limit=0.01)


def test_clears_on_real_drops_of_a_bouncing_ball(tmp_path):
    # A frictionless sphere dropped from rest falls h - R to the contact and
    # rises e^2 (h - R), then e^4 (h - R) (the bouncing ball of Halliday,
    # Resnick & Walker, Fundamentals of Physics, from memory; docs/physics.md
    # section 4: without friction all laws agree). Centre at
    # 0.1 m, R = 5 mm, e = 0.8: the centre tops out at 0.005 + 0.64 x 0.095
    # = 0.0658 m, then at 0.005 + 0.4096 x 0.095 = 0.043912 m.
    from hopscape.metrics import simulate_frame
    text = ("name: ball\nbody: {shape: sphere, diameter: 0.01}\ncontact: {restitution: 0.8, friction: 0}\n"
            "release: {height: 0.1, angle: {grid: {low: 0, high: 90, steps: 2}}}\n"
            "metric: {kind: clears, bounce: BOUNCE, reference: centre, limit: 0.05}\n"
            "analyses: {robustness: false}\nrun: {impacts: 3}\n")
    for bounce, expected_height, clears in (("first", 0.0658, True), ("2", 0.043912, False)):
        study = parse_study(text.replace("BOUNCE", bounce))
        from hopscape.plan import grid_frame
        out = simulate_frame(study, grid_frame(study))
        assert out["value"].to_numpy() == pytest.approx([expected_height] * 2, rel=1e-9)
        assert out["event"].tolist() == [clears] * 2
