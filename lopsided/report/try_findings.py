"""What `lopsided try` found on one dataset, as records: built by ``jobs.tryout``, shown by the report (the
"Your dataset" page, leaderboard.md, the learning-curve figures) and written into manifest.json (``as_json``)."""
import re
from dataclasses import asdict, dataclass, field

from ..analysis.learning_curve import CurveFit, NeededSize


@dataclass(frozen=True)
class LearningCurve:
    """One combination's learning curve toward a target score of one metric: the inverse power law fitted over
    minority training counts (``unit``: "rows", or "groups": donors / particles), the count it needs, its 95 %
    bootstrap band on ``grid``, and the measured scores {minority count: [score per repeat]}. ``fit`` is None
    when no curve could be fitted (``failure`` says why). ``per_group``: minority rows per group (None without
    groups), to give the answer in the other unit too."""

    method: str
    metric: str
    target: float
    unit: str
    fit: CurveFit | None = None
    needed: NeededSize | None = None
    grid: tuple[float, ...] = ()
    band: tuple[tuple[float, ...], tuple[float, ...]] = ((), ())
    measured: dict[float, list[float]] = field(default_factory=dict)
    per_group: float | None = None
    failure: str = ""

    @property
    def status(self):
        return "no fit" if self.needed is None else self.needed.status

    @property
    def reason(self):
        return self.failure if self.needed is None else self.needed.reason

    @property
    def size(self):
        return None if self.needed is None else self.needed.size

    @property
    def low(self):
        return None if self.needed is None else self.needed.low

    @property
    def high(self):
        return None if self.needed is None else self.needed.high

    def _other_unit(self, value):
        """A count of minority groups in rows (x rows per group), or of rows in groups (/ rows per group)."""
        if value is None or self.per_group is None:
            return None
        return value * self.per_group if self.unit == "groups" else value / self.per_group

    @property
    def other(self):
        return self._other_unit(self.size)

    @property
    def other_low(self):
        return self._other_unit(self.low)

    @property
    def other_high(self):
        return self._other_unit(self.high)

    @property
    def figure(self):
        """The figure's path in the folder (None: no fit, no figure)."""
        if self.fit is None:
            return None
        return "figures/" + re.sub(r"[^A-Za-z0-9._-]+", "_", f"curve-{self.metric}-{self.method}") + ".svg"

    def as_json(self):
        head = {"method": self.method, "metric": self.metric, "target": self.target, "status": self.status}
        if self.fit is None:
            return {**head, "reason": self.reason}
        return {**head, "unit": self.unit, "size": self.size, "low": self.low, "high": self.high,
                "reason": self.reason, "other": self.other, "other_low": self.other_low,
                "other_high": self.other_high, "a": self.fit.a, "b": self.fit.b, "c": self.fit.c,
                "figure": self.figure, "grid": list(self.grid), "band": [list(side) for side in self.band],
                "measured": {count: list(scores) for count, scores in self.measured.items()}}


@dataclass(frozen=True)
class Neighbour:
    """A benchmark dataset like the user's (meta-features) and the combination that won there."""

    dataset: str
    distance: float
    imbalance_ratio: float
    won: str | None
    score: float | None


@dataclass(frozen=True)
class TryFindings:
    """`lopsided try` on one dataset: the verdict lines, each combination against the best (``table``, with the
    ``metric`` and training ``size`` compared and the ``best``; None when fewer than two combinations could be
    compared), this dataset's meta-features and the benchmark datasets nearest to it, and the learning curves
    (``curve_note`` instead when the sizes cannot give one). ``suite`` and ``board`` name the leaderboard whose
    combinations ran; ``wanted`` the combinations; ``count`` what sizes count ("rows" or "groups")."""

    reference: str
    suite: str
    board: str
    wanted: tuple[str, ...]
    rope: float
    verdict: tuple[str, ...]
    meta: dict
    count: str
    table: tuple[dict, ...] | None = None
    metric: str | None = None
    size: str | None = None
    best: str | None = None
    neighbours: tuple[Neighbour, ...] = ()
    neighbour_note: str | None = None
    curves: tuple[LearningCurve, ...] = ()
    curve_note: str = ""

    @property
    def fitted_curves(self):
        """The curves with a figure to draw."""
        return [curve for curve in self.curves if curve.fit is not None]

    def as_json(self):
        """The manifest's ``tryout`` section."""
        found = {"reference": self.reference, "suite": self.suite, "board": self.board, "wanted": list(self.wanted),
                 "rope": self.rope, "verdict": list(self.verdict)}
        if self.table is not None:
            found.update(table=list(self.table), metric=self.metric, size=self.size, best=self.best)
        found.update(meta=self.meta, neighbours=[asdict(n) for n in self.neighbours])
        if self.neighbour_note is not None:
            found["neighbour_note"] = self.neighbour_note
        found["curves"] = [{"note": self.curve_note}] if self.curve_note else [c.as_json() for c in self.curves]
        found["count"] = self.count
        return found

    def manifest_sections(self):
        """What `lopsided try` adds to manifest.json: this section and the verdict lines."""
        return {"tryout": self.as_json(), "verdict": list(self.verdict)}
