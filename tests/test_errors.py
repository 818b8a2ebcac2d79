"""Errors meant for a user survive pickling (an error raised in a child process, as
the benchmark's and the dashboard's workers run, reaches the parent with its message
and fields instead of breaking the process pool)."""

import inspect
import pickle

from tracker import errors
from tracker.errors import BadFile, BadInput, BadRow, LogLocked, PourbackError, UnknownAlloy


def test_every_error_class_round_trips_through_pickle():
    made = [BadInput("quantity", -3, "must be above 0"), UnknownAlloy("tin", ["steel", "gray_iron"]),
            BadRow("lots.csv", 4, "molds", "must be a whole number"),
            BadFile("lots.csv", [BadRow("lots.csv", 4, "molds", "must be a whole number")]),
            LogLocked("log.db", 5.0)]
    classes = {c for _, c in inspect.getmembers(errors, inspect.isclass) if issubclass(c, PourbackError)}
    assert {type(e) for e in made} <= classes
    for error in made:
        back = pickle.loads(pickle.dumps(error))
        assert type(back) is type(error) and str(back) == str(error)
        assert {k: repr(v) for k, v in vars(back).items()} == {k: repr(v) for k, v in vars(error).items()}
    assert pickle.loads(pickle.dumps(made[0])).field == "quantity"
