"""sim/limits.py: allowed ranges declared once, worded alike at every entry point."""
import math

import numpy as np
import pytest

from hopscape import sim
from conftest import ball_text
from hopscape.batch import run_batch
from hopscape.cli import main
from hopscape.errors import InputError
from hopscape.study import parse_study
from hopscape.sim.limits import FRICTION, POSITIVE_SIZE, RESTITUTION, SIZE_OR_ZERO, Interval, number_text


@pytest.mark.parametrize("interval, text", [
    (RESTITUTION, "in [0, 1]"),
    (FRICTION, ">= 0"),
    (POSITIVE_SIZE, "> 0 m"),
    (SIZE_OR_ZERO, ">= 0 m"),
    (Interval(1, 2, closed="neither", unit="s"), "in (1, 2) s"),
    (Interval(high=5, closed="left"), "< 5"),
    (Interval(1.0, 1.0), "1"),
    (Interval(), "a finite number"),
])
def test_describe_reads_like_a_range(interval, text):
    assert interval.describe() == text


def test_contains_follows_the_closed_sides_and_refuses_non_finite_values():
    half_open = Interval(0.0, 1.0, closed="right")
    values = np.array([0.0, 1e-300, 1.0, 1.0000001, np.nan, np.inf])
    assert half_open.contains(values).tolist() == [False, True, True, False, False, False]
    assert FRICTION.contains(math.inf) == np.False_  # an infinite friction is not a number the model takes


def test_check_names_the_first_bad_value():
    with pytest.raises(ValueError, match=r"^restitution must be in \[0, 1\], got 1\.5$"):
        RESTITUTION.check("restitution", [0.2, 1.5, 2.0])
    assert RESTITUTION.check("restitution", 0.3) == 0.3


def test_numbers_print_as_written():
    assert [number_text(v) for v in (3, 0.25, 1e-05, math.inf, True)] == ["3", "0.25", "1e-05", "inf", "True"]


# The same out-of-range restitution through the four entry points: one wording.
WORDING = "must be in [0, 1], got 1.2"


def test_python_api_words_the_bound():
    with pytest.raises(ValueError) as caught:
        sim.Contact(restitution=1.2, friction=0.3)
    assert str(caught.value) == "restitution " + WORDING


def test_batch_row_words_the_bound():
    import pandas as pd
    table = run_batch(pd.DataFrame({"shape": ["sphere"], "radius": [0.003], "density": [1000.0], "height": [0.1],
                                    "angle": [0.0], "restitution": [1.2], "friction": [0.2]}))
    assert table["error"].tolist() == ["restitution " + WORDING]


def test_command_line_words_the_bound(capsys):
    assert main(["drop", "--restitution", "1.2", "--no-plots"]) == 2
    # the same bound, under the option's own name
    assert capsys.readouterr().err.strip() == "hopscape: error: --restitution " + WORDING


def test_study_file_words_the_bound():
    with pytest.raises(InputError) as caught:
        parse_study(ball_text(restitution="1.2"), "t.yaml")
    assert caught.value.messages == ["t.yaml:3:11: contact.restitution: " + WORDING]
