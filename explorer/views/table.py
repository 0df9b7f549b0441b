"""The comparison as a table: rows of formatted cells, a fixed-width text and a plain HTML table.

Every function takes a :class:`~explorer.compare.Comparison` and reads its data; nothing here
computes a figure.
"""

from __future__ import annotations

import html

from ..units import format_eng

__all__ = ["CAUTION", "ROW_HELP", "comparison_rows", "comparison_text", "comparison_html", "topology_text",
           "ranking_lines", "explain_text", "side_by_side_rows", "side_by_side_html"]

#: Shown under every comparison (see README "Safety").
CAUTION = ("Caution: bus voltages in these circuits can be lethal and stored charge persists after "
           "power-off. Results are estimates to be confirmed by measurement; isolation, creepage and "
           "clearance follow the applicable safety standards (e.g. IEC 62368-1, IEC 61800-5-1, "
           "IEC 60664-1), local codes and licensed practice.")

_DASH = "\u2014"

#: How the families of checks read in the table (see :data:`explorer.results.FAMILIES`).
_FAMILY_WORDS = {"efficiency": "power", "stress": "stress", "startup": "start-up", "duty": "duty",
                 "isolation": "isolation", "other": "other"}


def _bound(name: str, unit: str, sense: str):
    """Words of a bound that may be unbounded (None) or impossible (0): ``f_sw ≤ 3.49 MHz``."""
    def words(x, bridge=None):
        if x is None:
            return f"any {name}"
        if x == 0 and sense == "\u2264":
            return f"fails at any {name}" if unit == "Hz" else f"fails even at {name} = 0"
        return f"{name} {sense} {format_eng(x, unit)}"
    return words


def _passes(ok, bridge=None):
    """The operating point holds or fails, said in the leg's own terms."""
    verb = "holds" if ok else "fails"
    if bridge is None:
        return f"{verb} at its operating point"
    from ..topology import topology_of
    topo = topology_of(bridge)
    if topo.line_frequency:
        return f"{verb} at f_line = {format_eng(bridge.f_line, 'Hz')}"
    return f"{verb} at its duty command of {100 * topo.nominal_duty(bridge):.1f} %"


#: How the duty-limit figures in the topology's own terms read in a table: key → words(value, bridge).
#: None means unbounded for an upper frequency or charge limit and "none holds" for the others.
_TOPOLOGY_TERMS = {
    "v_out_max": lambda x, b=None: "no V_out holds" if x is None else f"V_out \u2264 {format_eng(x, 'V')}",
    "v_out_over_v_in_min": lambda x, b=None: ("no V_out/V_in holds" if x is None
                                              else f"V_out/V_in \u2265 {x:.3g}"),
    "duty_command_max": lambda x, b=None: ("no duty command holds" if x is None
                                           else f"duty command \u2264 {100 * x:.1f} %"),
    "m_max": lambda x, b=None: "no m holds" if x is None else f"m \u2264 {x:.3g}",
    "f_o_min": lambda x, b=None: ("no f_o holds" if x is None else "any f_o, standstill included" if x == 0
                                  else f"f_o \u2265 {format_eng(x, 'Hz')}"),
    "f_sw_max": _bound("f_sw", "Hz", "\u2264"),
    "f_line_max": lambda x, b=None: (f"any f_line below f_sw/2 = {format_eng(b.f_sw / 2, 'Hz')}"
                                     if b is not None and x is not None and x >= b.f_sw / 2
                                     else _bound("f_line", "Hz", "\u2264")(x, b)),
    "q_g_max": _bound("Q_G", "C", "\u2264"),
    "passes": _passes,
}


def topology_text(terms: dict, bridge=None) -> str:
    """Plain words for ``DutyLimits.topology`` (e.g. ``V_out ≤ 47.2 V``); unknown keys are skipped.

    ``bridge`` (the design's ``Bridge``) lets the operating point be named in the leg's terms (its
    duty command, or its line frequency on a line-frequency leg).
    """
    parts = [fmt(terms[key], bridge) for key, fmt in _TOPOLOGY_TERMS.items() if key in terms]
    return ", ".join(parts) or _DASH


def _pct(x) -> str:
    return _DASH if x is None else f"{100 * x:.1f} %"


def _duty(r, design=None) -> str:
    d = r.duty
    if d is None or (d.min is None and d.max is None):
        return "none holds" if d is not None else _DASH
    return f"{_pct(d.min if d.min is not None else 0.0)} \u2026 {_pct(d.max if d.max is not None else 1.0)}"


def _caps(r, design=None) -> str:
    return ", ".join(f"{c.name} {format_eng(c.v_max, 'V')}/{format_eng(c.v_rating, 'V')}"
                     for c in r.capacitors) or _DASH


def _checks(r, design=None) -> str:
    return ", ".join(f"{_FAMILY_WORDS.get(k, k)} {'ok' if v['ok'] else 'FAILS'}" for k, v in r.families().items())


def _startup(r, design=None) -> str:
    t = format_eng(r.startup.t_uvlo, "s")
    n = r.startup.cycles_uvlo
    if n is None or r.startup.t_uvlo is None:
        return t
    if n == 0:
        return f"{t} (within the first period)"
    if r.kind == "charge_pump":
        what = "pump cycles" if n != 1 else "pump cycle"
    else:
        from ..topology import topology_of
        line = design is not None and topology_of(design.bridge).line_frequency
        what = ("line periods" if line else "switching periods") if n != 1 else ("line period" if line else
                                                                                 "switching period")
    return f"{t} ({n} {what})"


#: The table's rows: quantity → how one option's cell reads, from its result and the design (a missing
#: part reads as a dash).
_ROWS = (
    ("kind", lambda r, d: r.kind),
    ("verdict", lambda r, d: ("OK " if r.feasible else "FAIL ") + r.verdict),
    ("checks", _checks),
    ("rail min / max", lambda r, d: f"{format_eng(r.v_rail.min, 'V')} / {format_eng(r.v_rail.max, 'V')}"),
    ("efficiency", lambda r, d: _pct(r.efficiency)),
    ("power delivered / drawn", lambda r, d: f"{format_eng(r.p_delivered, 'W')} / {format_eng(r.p_drawn, 'W')}"),
    ("losses (drawn \u2212 delivered)", lambda r, d: format_eng(r.overhead, "W")),
    ("start-up to UVLO on", _startup),
    ("inrush peak", lambda r, d: format_eng(r.startup.i_peak, "A")),
    ("HS duty that holds", _duty),
    ("limits in the leg's terms", lambda r, d: topology_text(r.duty.topology, d.bridge if d is not None else None)),
    ("hold-up at 100 % duty", lambda r, d: "unlimited" if r.duty.hold_up is None else format_eng(r.duty.hold_up, "s") + (
        "" if r.duty.hold_up_threshold is None else f" to {format_eng(r.duty.hold_up_threshold, 'V')}")),
    ("R_out (output resistance)", lambda r, d: format_eng(r.r_out, "\u03a9")),
    ("capacitor V_max / rating", _caps),
    ("warnings", lambda r, d: str(len(r.warnings))),
)

#: What each row means, in plain words (``python -m explorer evaluate --explain``, the HTML table's
#: tooltips and docs/glossary.md show it).
ROW_HELP = {
    "kind": "the supply family: bootstrap capacitor, switched-capacitor charge pump, or isolated module",
    "verdict": "holds when every check of the option passes; the text names the tightest check (or the "
               "failing ones, worst first), ranked by the margin relative to its limit, and gives the margin "
               "in the check's unit and as a share of the limit",
    "checks": "every check grouped by what it is about: power (the module's rating), stress (capacitor, "
              "diode, switch and rail voltages within their derated ratings), start-up (the rail reaches "
              "UVLO on), duty (the rail minimum stays above max(UVLO off, V_GS needed) + margin), isolation "
              "(CMTI and isolation voltage)",
    "rail min / max": "lowest and highest floating-rail voltage V_B \u2212 V_S in steady state, over the "
                      "analysis period (one switching period, one line period or one fundamental)",
    "efficiency": "power delivered into the rail's load divided by the power drawn from the aux rail and "
                  "the bus",
    "power delivered / drawn": "power into the rail's load (gate charge, driver quiescent current, "
                               "pull-down) / power taken from the aux rail and the bus together",
    "losses (drawn \u2212 delivered)": "power lost in the supply itself: power drawn minus power delivered "
                                        "(the default ranking: lowest first)",
    "start-up to UVLO on": "time from a dead rail until it first reaches the driver's UVLO rising threshold; "
                           "in brackets the same in the option's own periods (switching or line periods; "
                           "pump clock cycles for a pump)",
    "inrush peak": "highest current into the floating supply during start-up (steady state if higher)",
    "HS duty that holds": "range of high-side on-time share of the switching period over which the rail "
                          "minimum meets its requirement at this frequency",
    "limits in the leg's terms": "the same limit said in the topology's own variables: highest buck "
                                 "output, lowest boost step-up ratio, highest duty command, highest "
                                 "modulation index and lowest output frequency, or for a pump or module the "
                                 "highest leg frequency and gate charge it carries ('any' where unbounded)",
    "hold-up at 100 % duty": "how long the rail lasts with the high side held on (no refresh), from its "
                             "steady-state maximum down to the level given after 'to' (the required rail, or "
                             "UVLO off where the leg never refreshes)",
    "R_out (output resistance)": "the supply's output resistance seen by the rail (a pump's charge-transfer "
                                 "resistance, a module's output resistance); a dash where not applicable",
    "capacitor V_max / rating": "highest voltage across each capacitor of the option and its rated voltage",
    "warnings": "number of warnings (the text below the table lists them): where a model's assumptions "
                "stop holding or a figure needs attention",
}


def comparison_rows(comparison) -> list[tuple[str, list[str]]]:
    """Table rows (quantity, one formatted cell per option) shared by the text and HTML views."""
    design = getattr(comparison, "design", None)

    def cell(fn):
        out = []
        for r in comparison.options:
            try:
                out.append(fn(r, design))
            except (AttributeError, TypeError):
                out.append(_DASH)
        return out

    return [(q, cell(fn)) for q, fn in _ROWS]


def ranking_lines(comparison) -> list[str]:
    """The ranking in words; when no option holds, which check fails first for each (worst relative shortfall)."""
    lines = [f"ranking ({comparison.rank_words}): " + " > ".join(comparison.ranking())]
    if not any(r.feasible for r in comparison.options):
        for r in comparison.options:
            c = r.worst_margin
            if r.error or c is None:
                lines.append(f"fails first [{r.label}]: {r.verdict}")
            else:
                lines.append(f"fails first [{r.label}]: {c.text} ({c.margin_words()})")
    return lines


def explain_text(comparison=None) -> str:
    """What each row of the table means (``python -m explorer evaluate --explain``)."""
    w0 = max(len(q) for q, _ in _ROWS)
    out = ["What the rows mean (docs/glossary.md, section 'Comparison table', has the same):"]
    for q, _ in _ROWS:
        out.append(f"  {q.ljust(w0)}  {ROW_HELP[q]}")
    return "\n".join(out)


def comparison_text(comparison, explain: bool = False) -> str:
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
    out += ranking_lines(comparison)
    for r in comparison.options:
        out.append(f"verdict [{r.label}]: {r.verdict}")
        for w in r.warnings:
            out.append(f"warning [{r.label}]: {w}")
        for c in r.cautions:
            out.append(f"caution [{r.label}]: {c}")
        for a in r.assumptions:
            out.append(f"assumption [{r.label}]: {a}")
    if explain:
        out += ["", explain_text(comparison)]
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
        body.append(f"<tr><th style='text-align:left' title='{e(ROW_HELP.get(q, ''))}'>{e(q)}</th>"
                    f"{''.join(tds)}</tr>")
    warn = "".join(f"<li>[{e(r.label)}] {e(w)}</li>" for r in options for w in r.warnings)
    warn += "".join(f"<li>[{e(r.label)}] caution: {e(c)}</li>" for r in options for c in r.cautions)
    return (f"<div><b>{e(comparison.title)}</b><table><thead><tr><th></th>{head}</tr></thead>"
            f"<tbody>{''.join(body)}</tbody></table>"
            + "".join(f"<p>{e(x)}</p>" for x in ranking_lines(comparison))
            + (f"<ul>{warn}</ul>" if warn else "")
            + f"<p style='font-size:smaller'>{e(CAUTION)}</p></div>")


# --------------------------------------------------------------------------- the panels' side-by-side table

def _verdict_words(r, design=None) -> str:
    return "holds" if r.feasible else r.verdict


def _tightest(r, design=None) -> str:
    c = r.worst_margin
    if c is None:
        return _DASH
    return f"{c.text} ({c.margin_words()})"


def _worst_cap(r, design=None) -> str:
    """The capacitor voltage check with the least margin; without ratings the highest voltage."""
    cap = [c for c in r.checks if c.name.startswith("cap_voltage_")]
    if cap:
        c = min(cap, key=lambda c: c.margin / (abs(c.limit) or 1.0))
        return f"{c.text}: {format_eng(c.value, 'V')} ({c.margin_words()})"
    if r.capacitors:
        c = max(r.capacitors, key=lambda c: c.v_max)
        return f"{c.name} {format_eng(c.v_max, 'V')} (no rating given)"
    return _DASH


#: The side-by-side table of the panels and the notebook summary: quantity → cell(result, design)
#: (rows of :data:`_ROWS` reused by name, so a figure reads the same in every view).
_SIDE_BY_SIDE = (
    ("verdict", _verdict_words),
    ("tightest check", _tightest),
    ("efficiency", dict(_ROWS)["efficiency"]),
    ("losses (drawn \u2212 delivered)", dict(_ROWS)["losses (drawn \u2212 delivered)"]),
    ("worst capacitor stress", _worst_cap),
    ("start-up to UVLO on", dict(_ROWS)["start-up to UVLO on"]),
    ("HS duty that holds", _duty),
    ("limits in the leg's terms", dict(_ROWS)["limits in the leg's terms"]),
    ("hold-up at 100 % duty", dict(_ROWS)["hold-up at 100 % duty"]),
    ("warnings", lambda r, d: "; ".join(r.warnings) or "none"),
)

ROW_HELP.update({
    "tightest check": "the check with the smallest margin relative to its limit, with that margin in the "
                      "check's unit and as a share of the limit",
    "worst capacitor stress": "the capacitor voltage check with the least margin (its highest voltage "
                              "against checks.cap_derating \u00d7 its rating)",
})


def side_by_side_rows(comparison) -> list[tuple[str, list[str]]]:
    """Rows (quantity, one cell per option) of the panels' side-by-side table.

    Verdict in words, the tightest check with its margin, efficiency and overhead, the worst
    capacitor stress, time to UVLO, the duty range in HS terms and the topology's own, hold-up and
    the warnings. Every figure is read from the result (nothing computed here).
    """
    design = getattr(comparison, "design", None)

    def cell(fn, r):
        try:
            return fn(r, design)
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
        body.append(f"<tr><th style='text-align:left;padding:2px 8px;vertical-align:top' "
                    f"title='{e(ROW_HELP.get(q, ''))}'>{e(q)}</th>{''.join(tds)}</tr>")
    return (f"<table class='explorer-side-by-side' style='border-collapse:collapse'><thead><tr><th></th>{head}</tr>"
            f"</thead><tbody>{''.join(body)}</tbody></table>"
            + "".join(f"<p>{e(x)}</p>" for x in ranking_lines(comparison)))
