"""The side-by-side comparison: ``evaluate(design)`` and its result object."""

from __future__ import annotations

import html
import json
import warnings
from dataclasses import dataclass

from .design import Design, load_design
from .errors import DesignError, ModelValidityWarning
from .options import model_for
from .results import OptionResult, clean
from .schedule import schedule_validity
from .units import format_eng

__all__ = ["Comparison", "evaluate", "RANKINGS"]

RESULT_FORMAT = "explorer-result"
RESULT_VERSION = 1

#: Ranking rules: name → (plain words, key function; lower ranks first).
RANKINGS = {
    "overhead": ("lowest overhead among the feasible",
                 lambda r: (not r.feasible, r.overhead if r.overhead is not None else float("inf"))),
    "efficiency": ("highest efficiency among the feasible",
                   lambda r: (not r.feasible, -(r.efficiency or 0.0))),
    "margin": ("largest rail margin among the feasible",
               lambda r: (not r.feasible, -(r.v_rail.min if r.v_rail else float("-inf")))),
    "startup": ("fastest start-up among the feasible",
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
        raise KeyError(label)

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
                "rank": self.rank, "ranking": self.ranking(),
                "options": [r.to_dict(waveforms) for r in self.options]}

    def to_json(self, **kw) -> str:
        return json.dumps(self.to_dict(), allow_nan=False, **kw)

    # ------------------------------------------------------------------ views
    def rows(self) -> list[tuple[str, list[str]]]:
        """Table rows (quantity, one formatted cell per option) shared by text and HTML views."""
        def cell(fn):
            out = []
            for r in self.options:
                try:
                    out.append(fn(r))
                except (AttributeError, TypeError):
                    out.append("\u2014")
            return out

        def pct(x):
            return "\u2014" if x is None else f"{100 * x:.1f} %"

        def duty(r):
            d = r.duty
            if d is None or (d.min is None and d.max is None):
                return "none feasible" if d is not None else "\u2014"
            return f"{pct(d.min if d.min is not None else 0.0)} \u2026 {pct(d.max if d.max is not None else 1.0)}"

        def caps(r):
            return ", ".join(f"{c.name} {format_eng(c.v_max, 'V')}/{format_eng(c.v_rating, 'V')}"
                             for c in r.capacitors) or "\u2014"

        rows = [
            ("kind", cell(lambda r: r.kind)),
            ("verdict", cell(lambda r: ("OK " if r.feasible else "FAIL ") + r.verdict)),
            ("checks by family", cell(lambda r: " ".join(
                f"{_FAMILY_SHORT.get(k, k)}:{'ok' if v['ok'] else 'FAIL'}" for k, v in r.families().items()))),
            ("rail min / max", cell(lambda r: f"{format_eng(r.v_rail.min, 'V')} / {format_eng(r.v_rail.max, 'V')}")),
            ("efficiency", cell(lambda r: pct(r.efficiency))),
            ("delivered / drawn", cell(lambda r: f"{format_eng(r.p_delivered, 'W')} / {format_eng(r.p_drawn, 'W')}")),
            ("overhead", cell(lambda r: format_eng(r.overhead, "W"))),
            ("start-up to UVLO", cell(lambda r: format_eng(r.startup.t_uvlo, "s") + (
                f" ({r.startup.cycles_uvlo} cyc)" if r.startup.cycles_uvlo is not None else ""))),
            ("inrush peak", cell(lambda r: format_eng(r.startup.i_peak, "A"))),
            ("HS duty range", cell(duty)),
            ("limit, topology terms", cell(lambda r: topology_text(r.duty.topology))),
            ("hold-up at 100 %", cell(lambda r: "unlimited" if r.duty.hold_up is None else format_eng(r.duty.hold_up, "s"))),
            ("R_out", cell(lambda r: format_eng(r.r_out, "\u03a9"))),
            ("cap V_max / rating", cell(caps)),
            ("warnings", cell(lambda r: str(len(r.warnings)))),
        ]
        return rows

    def to_text(self) -> str:
        """A readable fixed-width table with engineering units."""
        labels = [r.label for r in self.options]
        rows = self.rows()
        rows = [(q, [c if q != "verdict" else c.split(" ", 1)[0].replace("OK", "holds").replace("FAIL", "FAILS")
                     for c in cells]) for q, cells in rows]
        w0 = max(len(q) for q, _ in rows)
        widths = [max(len(labels[i]), *(len(cells[i]) for _, cells in rows)) for i in range(len(labels))]
        line = lambda q, cells: "  ".join([q.ljust(w0)] + [c.ljust(w) for c, w in zip(cells, widths)]).rstrip()
        out = [self.title, "", line("", labels), line("", ["-" * w for w in widths])]
        out += [line(q, cells) for q, cells in rows]
        out.append("")
        out.append(f"ranking ({RANKINGS[self.rank][0]}): " + " > ".join(self.ranking()))
        for r in self.options:
            out.append(f"verdict [{r.label}]: {r.verdict}")
            for w in r.warnings:
                out.append(f"warning [{r.label}]: {w}")
            for c in r.cautions:
                out.append(f"caution [{r.label}]: {c}")
        out.append("")
        out.append(CAUTION)
        return "\n".join(out)

    def __str__(self) -> str:
        return self.to_text()

    def __repr__(self) -> str:
        ok = sum(r.feasible for r in self.options)
        return f"<Comparison {self.title!r}: {len(self.options)} options, {ok} hold; ranking {self.ranking()}>"

    def _repr_html_(self) -> str:
        """A plain HTML table (no JavaScript), readable in an untrusted notebook."""
        e = html.escape
        head = "".join(f"<th>{e(r.label)}</th>" for r in self.options)
        body = []
        for q, cells in self.rows():
            tds = []
            for r, c in zip(self.options, cells):
                style = ""
                if q == "verdict":
                    style = ' style="color:#1b5e20"' if r.feasible else ' style="color:#b71c1c"'
                tds.append(f"<td{style}>{e(c)}</td>")
            body.append(f"<tr><th style='text-align:left'>{e(q)}</th>{''.join(tds)}</tr>")
        warn = "".join(f"<li>[{e(r.label)}] {e(w)}</li>" for r in self.options for w in r.warnings)
        warn += "".join(f"<li>[{e(r.label)}] caution: {e(c)}</li>" for r in self.options for c in r.cautions)
        return (f"<div><b>{e(self.title)}</b><table><thead><tr><th></th>{head}</tr></thead>"
                f"<tbody>{''.join(body)}</tbody></table>"
                f"<p>ranking ({e(RANKINGS[self.rank][0])}): {e(' > '.join(self.ranking()))}</p>"
                + (f"<ul>{warn}</ul>" if warn else "")
                + f"<p style='font-size:smaller'>{e(CAUTION)}</p></div>")


_FAMILY_SHORT = {"efficiency": "power", "stress": "stress", "startup": "start", "duty": "duty",
                 "isolation": "iso", "other": "other"}

#: How the duty-limit figures in the topology's own terms read in a table (key → template).
_TOPOLOGY_TERMS = {
    "v_out_max": lambda x: f"V_out \u2264 {format_eng(x, 'V')}",
    "v_out_over_v_in_min": lambda x: f"V_out/V_in \u2265 {x:.3g}",
    "duty_command_max": lambda x: f"command \u2264 {100 * x:.1f} %",
    "m_max": lambda x: f"m \u2264 {x:.3g}",
    "f_o_min": lambda x: f"f_o \u2265 {format_eng(x, 'Hz')}",
    "f_sw_max": lambda x: f"f_sw \u2264 {format_eng(x, 'Hz')}",
    "q_g_max": lambda x: f"Q_G \u2264 {format_eng(x, 'C')}",
    "passes": lambda x: "holds at this line frequency" if x else "fails at this line frequency",
}


def topology_text(terms: dict) -> str:
    """Plain words for ``DutyLimits.topology`` (e.g. ``V_out ≤ 47.2 V``); unknown keys are skipped."""
    parts = []
    for key, fmt in _TOPOLOGY_TERMS.items():
        if key in terms:
            v = terms[key]
            parts.append("none feasible" if v is None and key != "f_o_min" else
                         "\u2014" if v is None else fmt(v))
    return ", ".join(parts) or "\u2014"


#: Shown under every comparison (see README "Safety").
CAUTION = ("Caution: bus voltages in these circuits can be lethal and stored charge persists after "
           "power-off. Results are estimates to be confirmed by measurement; isolation, creepage and "
           "clearance follow the applicable safety standards (e.g. IEC 62368-1, IEC 61800-5-1, "
           "IEC 60664-1), local codes and licensed practice.")


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
        fn = model_for(opt.kind)
        if fn is None:
            results.append(OptionResult.failed(opt.label, opt.kind,
                                               f"the {opt.kind} model is not available in this version"))
            continue
        results.append(fn(d, opt))
    return Comparison(d, tuple(results), rank)


__all__ += ["CAUTION", "clean"]
