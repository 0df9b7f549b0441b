"""The comparison as a table: rows of formatted cells, a fixed-width text and a plain HTML table.

Every function takes a :class:`~explorer.compare.Comparison` and reads its data; nothing here
computes a figure.
"""

from __future__ import annotations

import html

from ..units import format_eng

__all__ = ["CAUTION", "comparison_rows", "comparison_text", "comparison_html", "topology_text",
           "side_by_side_rows", "side_by_side_html"]

#: Shown under every comparison (see README "Safety").
CAUTION = ("Caution: bus voltages in these circuits can be lethal and stored charge persists after "
           "power-off. Results are estimates to be confirmed by measurement; isolation, creepage and "
           "clearance follow the applicable safety standards (e.g. IEC 62368-1, IEC 61800-5-1, "
           "IEC 60664-1), local codes and licensed practice.")

_DASH = "\u2014"

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
                         _DASH if v is None else fmt(v))
    return ", ".join(parts) or _DASH


def _pct(x) -> str:
    return _DASH if x is None else f"{100 * x:.1f} %"


def _duty(r) -> str:
    d = r.duty
    if d is None or (d.min is None and d.max is None):
        return "none feasible" if d is not None else _DASH
    return f"{_pct(d.min if d.min is not None else 0.0)} \u2026 {_pct(d.max if d.max is not None else 1.0)}"


def _caps(r) -> str:
    return ", ".join(f"{c.name} {format_eng(c.v_max, 'V')}/{format_eng(c.v_rating, 'V')}"
                     for c in r.capacitors) or _DASH


#: The table's rows: quantity → how one option's cell reads (a missing part reads as a dash).
_ROWS = (
    ("kind", lambda r: r.kind),
    ("verdict", lambda r: ("OK " if r.feasible else "FAIL ") + r.verdict),
    ("checks by family", lambda r: " ".join(
        f"{_FAMILY_SHORT.get(k, k)}:{'ok' if v['ok'] else 'FAIL'}" for k, v in r.families().items())),
    ("rail min / max", lambda r: f"{format_eng(r.v_rail.min, 'V')} / {format_eng(r.v_rail.max, 'V')}"),
    ("efficiency", lambda r: _pct(r.efficiency)),
    ("delivered / drawn", lambda r: f"{format_eng(r.p_delivered, 'W')} / {format_eng(r.p_drawn, 'W')}"),
    ("overhead", lambda r: format_eng(r.overhead, "W")),
    ("start-up to UVLO", lambda r: format_eng(r.startup.t_uvlo, "s") + (
        f" ({r.startup.cycles_uvlo} cyc)" if r.startup.cycles_uvlo is not None else "")),
    ("inrush peak", lambda r: format_eng(r.startup.i_peak, "A")),
    ("HS duty range", _duty),
    ("limit, topology terms", lambda r: topology_text(r.duty.topology)),
    ("hold-up at 100 %", lambda r: "unlimited" if r.duty.hold_up is None else format_eng(r.duty.hold_up, "s") + (
        "" if r.duty.hold_up_threshold is None else f" to {format_eng(r.duty.hold_up_threshold, 'V')}")),
    ("R_out", lambda r: format_eng(r.r_out, "\u03a9")),
    ("cap V_max / rating", _caps),
    ("warnings", lambda r: str(len(r.warnings))),
)


def comparison_rows(comparison) -> list[tuple[str, list[str]]]:
    """Table rows (quantity, one formatted cell per option) shared by the text and HTML views."""
    def cell(fn):
        out = []
        for r in comparison.options:
            try:
                out.append(fn(r))
            except (AttributeError, TypeError):
                out.append(_DASH)
        return out

    return [(q, cell(fn)) for q, fn in _ROWS]


def comparison_text(comparison) -> str:
    """A readable fixed-width table with engineering units, the ranking, verdicts, warnings, cautions."""
    labels = [r.label for r in comparison.options]
    rows = comparison_rows(comparison)
    rows = [(q, [c if q != "verdict" else c.split(" ", 1)[0].replace("OK", "holds").replace("FAIL", "FAILS")
                 for c in cells]) for q, cells in rows]
    w0 = max(len(q) for q, _ in rows)
    widths = [max(len(labels[i]), *(len(cells[i]) for _, cells in rows)) for i in range(len(labels))]

    def line(q, cells):
        return "  ".join([q.ljust(w0)] + [c.ljust(w) for c, w in zip(cells, widths)]).rstrip()

    out = [comparison.title, "", line("", labels), line("", ["-" * w for w in widths])]
    out += [line(q, cells) for q, cells in rows]
    out.append("")
    out.append(f"ranking ({comparison.rank_words}): " + " > ".join(comparison.ranking()))
    for r in comparison.options:
        out.append(f"verdict [{r.label}]: {r.verdict}")
        for w in r.warnings:
            out.append(f"warning [{r.label}]: {w}")
        for c in r.cautions:
            out.append(f"caution [{r.label}]: {c}")
        for a in r.assumptions:
            out.append(f"assumption [{r.label}]: {a}")
    out.append("")
    out.append(CAUTION)
    return "\n".join(out)


def comparison_html(comparison) -> str:
    """A plain HTML table (no JavaScript), readable in an untrusted notebook."""
    e = html.escape
    options = comparison.options
    head = "".join(f"<th>{e(r.label)}</th>" for r in options)
    body = []
    for q, cells in comparison_rows(comparison):
        tds = []
        for r, c in zip(options, cells):
            style = ""
            if q == "verdict":
                style = ' style="color:#1b5e20"' if r.feasible else ' style="color:#b71c1c"'
            tds.append(f"<td{style}>{e(c)}</td>")
        body.append(f"<tr><th style='text-align:left'>{e(q)}</th>{''.join(tds)}</tr>")
    warn = "".join(f"<li>[{e(r.label)}] {e(w)}</li>" for r in options for w in r.warnings)
    warn += "".join(f"<li>[{e(r.label)}] caution: {e(c)}</li>" for r in options for c in r.cautions)
    return (f"<div><b>{e(comparison.title)}</b><table><thead><tr><th></th>{head}</tr></thead>"
            f"<tbody>{''.join(body)}</tbody></table>"
            f"<p>ranking ({e(comparison.rank_words)}): {e(' > '.join(comparison.ranking()))}</p>"
            + (f"<ul>{warn}</ul>" if warn else "")
            + f"<p style='font-size:smaller'>{e(CAUTION)}</p></div>")


# --------------------------------------------------------------------------- the panels' side-by-side table

def _verdict_words(r) -> str:
    return "holds" if r.feasible else r.verdict


def _tightest(r) -> str:
    c = r.worst_margin
    if c is None:
        return _DASH
    unit = "" if c.unit in ("", "-") else f" {c.unit}"
    return f"{c.text} (margin {c.margin:.3g}{unit})"


def _worst_cap(r) -> str:
    """The capacitor voltage check with the least margin; without ratings the highest voltage."""
    cap = [c for c in r.checks if c.name.startswith("cap_voltage_")]
    if cap:
        c = min(cap, key=lambda c: c.margin / (abs(c.limit) or 1.0))
        return f"{c.text}: {format_eng(c.value, 'V')} (margin {format_eng(c.margin, 'V')})"
    if r.capacitors:
        c = max(r.capacitors, key=lambda c: c.v_max)
        return f"{c.name} {format_eng(c.v_max, 'V')} (no rating given)"
    return _DASH


#: The side-by-side table of the panels and the notebook summary: quantity → cell (rows of
#: :data:`_ROWS` reused by name, so a figure reads the same in every view).
_SIDE_BY_SIDE = (
    ("verdict", _verdict_words),
    ("tightest check", _tightest),
    ("efficiency", dict(_ROWS)["efficiency"]),
    ("overhead", dict(_ROWS)["overhead"]),
    ("worst capacitor stress", _worst_cap),
    ("start-up to UVLO", dict(_ROWS)["start-up to UVLO"]),
    ("HS duty range", _duty),
    ("limit, topology terms", dict(_ROWS)["limit, topology terms"]),
    ("hold-up at 100 %", dict(_ROWS)["hold-up at 100 %"]),
    ("warnings", lambda r: "; ".join(r.warnings) or "none"),
)


def side_by_side_rows(comparison) -> list[tuple[str, list[str]]]:
    """Rows (quantity, one cell per option) of the panels' side-by-side table.

    Verdict in words, the tightest check with its margin, efficiency and overhead, the worst
    capacitor stress, time to UVLO, the duty range in HS terms and the topology's own, hold-up and
    the warnings. Every figure is read from the result (nothing computed here).
    """
    def cell(fn, r):
        try:
            return fn(r)
        except (AttributeError, TypeError):
            return _DASH

    return [(q, [cell(fn, r) for r in comparison.options]) for q, fn in _SIDE_BY_SIDE]


def side_by_side_html(comparison, colors: dict | None = None) -> str:
    """The side-by-side table as plain HTML (no JavaScript); ``colors``: label → CSS colour of its head."""
    e = html.escape
    colors = colors or {}
    head = "".join(
        f"<th data-label='{e(r.label)}' style='border-bottom:4px solid {e(colors.get(r.label, '#999'))};"
        f"text-align:left;padding:2px 8px'>{e(r.label)}<br><span style='font-weight:normal'>{e(r.kind)}</span></th>"
        for r in comparison.options)
    body = []
    for q, cells in side_by_side_rows(comparison):
        tds = []
        for r, c in zip(comparison.options, cells):
            style = "padding:2px 8px;vertical-align:top"
            if q == "verdict":
                style += ";font-weight:bold;color:" + ("#1b5e20" if r.feasible else "#b71c1c")
            tds.append(f"<td style='{style}'>{e(c)}</td>")
        body.append(f"<tr><th style='text-align:left;padding:2px 8px;vertical-align:top'>{e(q)}</th>{''.join(tds)}</tr>")
    return (f"<table class='explorer-side-by-side' style='border-collapse:collapse'><thead><tr><th></th>{head}</tr>"
            f"</thead><tbody>{''.join(body)}</tbody></table>"
            f"<p>ranking ({e(comparison.rank_words)}): {e(' > '.join(comparison.ranking()))}</p>")
