"""The side-by-side comparison: ``evaluate(design)`` and its result object."""

from __future__ import annotations

import json
import warnings
from dataclasses import dataclass

from .design import Design, load_design
from .errors import DesignError, ModelValidityWarning
from .memo import Memory
from .options import supply_model
from .results import OptionResult, clean, plausibility
from .schedule import schedule_validity
from .views.table import CAUTION, comparison_html, comparison_rows, comparison_text, topology_text

__all__ = ["Comparison", "evaluate", "RANKINGS"]

RESULT_FORMAT = "explorer-result"
RESULT_VERSION = 1

#: Ranking rules: name → (the criterion in plain words, key function; lower ranks first). Options that
#: hold rank before those that do not; :attr:`Comparison.rank_words` says which is which.
RANKINGS = {
    "overhead": ("lowest losses, power drawn \u2212 delivered",
                 lambda r: (not r.feasible, r.overhead if r.overhead is not None else float("inf"))),
    "efficiency": ("highest efficiency",
                   lambda r: (not r.feasible, -(r.efficiency or 0.0))),
    "margin": ("highest rail minimum",
               lambda r: (not r.feasible, -(r.v_rail.min if r.v_rail else float("-inf")))),
    "startup": ("fastest start-up",
                lambda r: (not r.feasible, r.startup.t_uvlo if r.startup and r.startup.t_uvlo is not None
                           else float("inf"))),
    "input": ("input order", lambda r: 0),
}


@dataclass(frozen=True)
class Comparison:
    """All options of one design, evaluated side by side.

    Attributes
    ----------
    design : Design
    options : tuple of OptionResult
        One per option, in input order.
    rank : str
        The ranking rule (a key of :data:`RANKINGS`).
    """

    design: Design
    options: tuple
    rank: str = "overhead"

    @property
    def title(self) -> str:
        return self.design.title

    def __getitem__(self, label: str) -> OptionResult:
        for r in self.options:
            if r.label == label:
                return r
        raise KeyError(f"no option labelled {label!r}; labels: " + ", ".join(repr(r.label) for r in self.options))

    def ranking(self) -> list:
        """Option labels best first under the ranking rule (a stable sort)."""
        key = RANKINGS[self.rank][1]
        return [r.label for r in sorted(self.options, key=key)]

    @property
    def best(self) -> OptionResult | None:
        """The first-ranked option if it is feasible."""
        top = self[self.ranking()[0]]
        return top if top.feasible else None

    def to_dict(self, waveforms: bool = False) -> dict:
        """The ``explorer-result`` JSON contract (SI units, None where not applicable)."""
        return {"format": RESULT_FORMAT, "version": RESULT_VERSION, "title": self.title,
                "rank": self.rank, "ranking": self.ranking(), "rank_words": self.rank_words,
                "holds": [r.label for r in self.options if r.feasible],
                "options": [r.to_dict(waveforms) for r in self.options], "caution": CAUTION}

    def to_json(self, **kw) -> str:
        return json.dumps(self.to_dict(), allow_nan=False, **kw)

    @property
    def rank_words(self) -> str:
        """The ranking rule in plain words, saying which options hold (e.g. ``lowest losses, power drawn −
        delivered among the 3 options that hold; then the 2 that do not``, or ``no option holds; ...``)."""
        crit = RANKINGS[self.rank][0]
        n, k = len(self.options), sum(r.feasible for r in self.options)
        if self.rank == "input":  # not sorted at all
            return "input order; " + ("no option holds" if k == 0 else f"{k} of {n} hold")
        if k == 0:
            return f"no option holds; listed by {crit}"
        if k == n:
            return f"{crit}; {'all ' + str(n) + ' options hold' if n > 1 else 'the option holds'}"
        return (f"{crit} among the {k} option{'s' if k > 1 else ''} that hold"
                + ("s" if k == 1 else "") + "; then " + ("the one that does not" if n - k == 1
                                                         else f"the {n - k} that do not"))

    # Views live in explorer.views; these thin methods keep ``print(result)``, notebooks and the CLI.
    def rows(self) -> list[tuple[str, list[str]]]:
        """Table rows (see :func:`explorer.views.table.comparison_rows`)."""
        return comparison_rows(self)

    def to_text(self, explain: bool = False) -> str:
        """The fixed-width text table (see :func:`explorer.views.table.comparison_text`); ``explain`` adds
        what each row means."""
        return comparison_text(self, explain=explain)

    def __str__(self) -> str:
        return comparison_text(self)

    def __repr__(self) -> str:
        ok = sum(r.feasible for r in self.options)
        return f"<Comparison {self.title!r}: {len(self.options)} options, {ok} hold; ranking {self.ranking()}>"

    def _repr_html_(self) -> str:
        """The HTML table (see :func:`explorer.views.table.comparison_html`)."""
        return comparison_html(self)


def evaluate(design, *, rank: str = "overhead") -> Comparison:
    """Evaluate every option of a design and compare them.

    Parameters
    ----------
    design : Design, dict, path or JSON text
        Anything :func:`~explorer.design.load_design` accepts.
    rank : str
        Ranking rule, one of :data:`RANKINGS`.

    Returns
    -------
    Comparison

    Raises
    ------
    DesignError
        For an invalid design or an unknown ranking rule.

    Warns
    -----
    ModelValidityWarning
        When the schedule leaves the range every model assumes
        (:func:`~explorer.schedule.schedule_validity`).
    """
    d: Design = load_design(design)
    if rank not in RANKINGS:
        raise DesignError("rank", f"expected one of {', '.join(RANKINGS)}", rank)
    for reason in schedule_validity(d):
        warnings.warn(reason, ModelValidityWarning, stacklevel=2)
    results = []
    for opt in d.options:
        model = supply_model(opt.kind)
        if model is None:
            results.append(OptionResult.failed(opt.label, opt.kind,
                                               f"the {opt.kind} model is not available in this version"))
            continue
        r = option_result(model, d, opt)
        if r.checks and r.checks[-1].name == "rail_plausible":
            warnings.warn(r.warnings[-1], ModelValidityWarning, stacklevel=2)
        results.append(r)
    return Comparison(d, tuple(results), rank)


#: Option results by (model, option, the design's other fields): an option's figures depend on the
#: design and on the option itself, never on the other options, so a change to one option (a panel
#: typing a new C_boot) leaves the others' results as they were (:mod:`explorer.memo`).
_RESULTS = Memory("option results", maxsize=64)


def _result_key(model, design: Design, option):
    """The key of an option's result, or None where something in it cannot be hashed."""
    key = (model, option, design.title, design.bridge, design.gate, design.driver, design.aux, design.checks,
           design.spread)
    try:
        hash(key)
    except TypeError:
        return None
    return key


def _computed(model, design: Design, option) -> tuple:
    """The option's result and every warning its evaluation gave (recorded whatever the filters are)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        r = plausibility(model.evaluate(design, option))
    return r, tuple((w.message, w.category) for w in caught)


def option_result(model, design: Design, option) -> OptionResult:
    """One option's result (:meth:`SupplyModel.evaluate` and :func:`~explorer.results.plausibility`),
    remembered between calls; the warnings of its evaluation are given again on every call, through
    the caller's warning filters, as if it had been computed afresh."""
    key = _result_key(model, design, option)
    r, caught = _computed(model, design, option) if key is None else _RESULTS.get(
        key, lambda: _computed(model, design, option))
    for message, category in caught:
        warnings.warn(message, category, stacklevel=3)
    return r


__all__ += ["CAUTION", "clean", "topology_text"]
