"""One exception family for everything a user can get wrong, in this one file.

The command line catches `LopsidedError` once, prints its message and exits 2 (a stopped run: 130 / 143).
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


class UsageError(LopsidedError):
    """A command-line option has a value lopsided cannot use: ``--option: value: problem``."""

    def __init__(self, option, value, message):
        super().__init__(f"{option}: {value}: {message}")


class AnalysisError(LopsidedError):
    """A score table cannot support a comparison."""


class ResamplingError(LopsidedError):
    """A resampler cannot work on this training set (too few samples, one class, ...)."""


class BackendError(LopsidedError):
    """A backend cannot be chosen or started, or a worker failed outside a unit's own error handling."""


class BoardError(LopsidedError):
    """A leaderboard folder (read by `lopsided compare` and `lopsided try`), or an option of `compare`, cannot be
    used: ``source: field: problem``."""

    def __init__(self, source, field, message):
        super().__init__(f"{source}: {field}: {message}")


class BundleError(LopsidedError):
    """A bundle file, or what it would do to a store, cannot be accepted: ``file: field: problem``."""

    def __init__(self, source, field, message):
        super().__init__(f"{source}: {field}: {message}")


class Interrupted(LopsidedError):
    """A run stopped by SIGINT or SIGTERM; every finished cell is in the store. ``exit_code`` is the shell's
    convention for a process ended by that signal: 128 + its number (130, 143)."""

    def __init__(self, message, signal_name):
        import signal
        super().__init__(message)
        self.exit_code = 128 + signal.Signals[signal_name].value


def did_you_mean(name, known):
    """' (did you mean 'x'?)' for the closest known name, or '' when nothing is close."""
    close = difflib.get_close_matches(str(name), list(known), n=1, cutoff=0.5)
    return f" (did you mean {close[0]!r}?)" if close else ""


def unknown(kind, name, known):
    """Message for an unknown name: the suggestion and every allowed value."""
    return f"unknown {kind} {name!r}{did_you_mean(name, known)}; known: {', '.join(sorted(known))}"
