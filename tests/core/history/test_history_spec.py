"""The schedule of a history: every generation stepped once, under the epoch covering it.

The convention (infer/core/history/spec.py): the step of the epoch covering generation t
ago produces generation t - 1; generations no epoch covers keep present-day values.
"""

from infer.core.history.spec import Epoch, Founder, History


def _steps(actions):
    return [(a[1], a[2]) for a in actions if a[0] == "steps"]


def test_every_generation_is_stepped_once_under_its_epoch():
    history = History(epochs=(Epoch(generations=5, values={"s": 0.1}),
                              Epoch(generations=3, ends=8, values={"Ne": 20.0})))
    # 0-5 ago s = 0.1; 5-8 ago a gap at present values; 8-11 ago Ne = 20
    assert history.length == 11
    assert _steps(history.schedule()) == [({"Ne": 20.0}, 3), ({}, 3), ({"s": 0.1}, 5)]
    assert history.ancestral_values == {"Ne": 20.0}


def test_records_and_the_founder_fall_at_their_generation():
    history = History(epochs=(Epoch(generations=10),),
                      founder=Founder(founders=7, generations_ago=4))
    actions = history.schedule(times=(0, 6, 10))
    assert actions == [("record", 10), ("steps", {}, 4), ("record", 6), ("steps", {}, 2),
                       ("found",), ("steps", {}, 4), ("record", 0)]
    assert sum(a[2] for a in actions if a[0] == "steps") == 10


def test_a_founder_at_the_start_acts_before_any_step():
    history = History(epochs=(Epoch(generations=3),),
                      founder=Founder(founders=7, generations_ago=3, frequency="q_founder"))
    assert history.schedule()[0] == ("found",)
    assert history.parameter_names == {"q_founder"}
