"""One exception family for everything a user can get wrong.

The command line catches `LopsidedError` once, prints its message and exits 2.
"""
import difflib


class LopsidedError(Exception):
    """Base of every error lopsided raises on bad input."""


class SuiteError(LopsidedError):
    """A suite file (or a method spec given on the command line) is invalid."""

    def __init__(self, source, field, message):
        self.source, self.field = str(source), field
        super().__init__(f"{source}: {field}: {message}")


class DatasetError(LopsidedError):
    """A dataset reference cannot be resolved or its file is malformed."""


class MethodError(LopsidedError):
    """A resampler or learner name or import path cannot be resolved."""


class StoreError(LopsidedError):
    """The result store is missing, foreign or corrupt."""


def did_you_mean(name, known):
    """' (did you mean 'x'?)' for the closest known name, or '' when nothing is close."""
    close = difflib.get_close_matches(str(name), list(known), n=1, cutoff=0.5)
    return f" (did you mean {close[0]!r}?)" if close else ""


def unknown(kind, name, known):
    """Message for an unknown name: the suggestion and every allowed value."""
    return f"unknown {kind} {name!r}{did_you_mean(name, known)}; known: {', '.join(sorted(known))}"
