"""The hand-off report: one self-contained HTML file for a colleague who has no explorer.

:func:`report_html` turns a design (and, where given, its design rules and a filled notebook)
into one HTML document: the cautions, each option's verdict and checks, the comparison table,
the rules and their status, the plots (BokehJS core inline, once), the notebook's cells and outputs,
and, in ``<script type="application/json">`` blocks, the design file itself, the
``explorer-result`` JSON of the evaluation and the rules. :func:`read_report` gives those
blocks back, so ``load_design(read_report(path)["design"])`` reproduces the report's numbers.

The file makes no network request: everything is inline, and a Content-Security-Policy in its
head forbids the browser to fetch anything (an image or a link in a notebook's output that
points outside is blocked, not loaded). Plots need ``bokeh`` (the ``panels`` extra); the rest
needs only the core. Nothing here computes a figure: it reads the result objects.
"""

from __future__ import annotations

import html
import json
import os
import re

from ..compare import Comparison, evaluate
from ..design import design_to_dict, load_design, read_bounded
from ..errors import DesignError
from .table import CAUTION, comparison_html

__all__ = ["report_html", "write_report", "read_report", "REPORT_BLOCKS"]

#: The JSON blocks a report embeds: block id → what it holds.
REPORT_BLOCKS = {"explorer-design": "the design file (explorer-design JSON)",
                 "explorer-result": "the evaluation (explorer-result JSON)",
                 "explorer-rules": "the design rules (explorer-rules JSON)",
                 "explorer-rules-report": "every rule's outcome"}

#: Notebooks larger than this are refused [bytes].
MAX_NOTEBOOK_BYTES = 20_000_000

_CSP = ("default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; "
        "img-src data:; font-src data:; connect-src 'none'; frame-src 'none'; form-action 'none'; base-uri 'none'")

_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2em auto; padding: 0 1em; max-width: 75em; color: #222; line-height: 1.4; }
table { border-collapse: collapse; margin: 0.5em 0 1em; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.5em; text-align: left; vertical-align: top; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
.caution { border: 2px solid #b71c1c; background: #fff3f3; padding: 0.5em 1em; }
.ok { color: #1b5e20; } .fail { color: #b71c1c; }
.cell { border-left: 3px solid #ddd; margin: 0.8em 0; padding-left: 0.8em; }
.cell pre.src { background: #f6f6f6; padding: 0.4em; }
pre { white-space: pre-wrap; overflow-x: auto; }
.plots > div { margin: 1em 0; }
"""


_SENSE = {"min": "\u2265", "max": "\u2264"}


def _e(x) -> str:
    return html.escape(str(x))


def _json_block(block_id: str, data) -> str:
    """A JSON block; ``</`` is written ``<\\/`` (the same JSON) so the text cannot end the script early."""
    text = json.dumps(data, indent=1, ensure_ascii=False, allow_nan=False).replace("</", "<\\/")
    return f'<script type="application/json" id="{block_id}">{text}</script>'


def _verdicts(comparison: Comparison) -> str:
    best = comparison.best
    lines = [f"<p><b>Ranking</b> ({_e(comparison.rank_words)}): {_e(' > '.join(comparison.ranking()))}. "
             + (f"First feasible choice: <b>{_e(best.label)}</b>.</p>" if best else
                "<b class='fail'>No option holds.</b></p>")]
    lines.append("<ul>")
    for r in comparison.options:
        cls = "ok" if r.feasible else "fail"
        lines.append(f"<li><b>{_e(r.label)}</b> ({_e(r.kind)}): <span class='{cls}'>"
                     f"{'holds' if r.feasible else 'does not hold'}</span> \u2014 {_e(r.verdict)}</li>")
    lines.append("</ul>")
    return "".join(lines)


def _checks(comparison: Comparison) -> str:
    out = []
    for r in comparison.options:
        rows = "".join(
            f"<tr><td style='text-align:left'>{_e(c.name)}</td><td style='text-align:left'>{_e(c.text)}</td>"
            f"<td class='num'>{c.value:.6g}</td><td class='num'>{_SENSE[c.sense]} {c.limit:.6g}</td>"
            f"<td class='num'>{c.margin:+.4g}</td><td>{_e(c.unit)}</td>"
            f"<td class='{'ok' if c.ok else 'fail'}'>{'ok' if c.ok else 'FAIL'}</td></tr>" for c in r.checks)
        fams = "; ".join(f"{k}: {v['verdict']}" for k, v in r.families().items())
        warn = "".join(f"<li>{_e(w)}</li>" for w in r.warnings)
        out.append(f"<h3>{_e(r.label)}</h3>"
                   + (f"<p class='fail'>not evaluated: {_e(r.error)}</p>" if r.error else "")
                   + (f"<p>{_e(fams)}</p>" if fams else "")
                   + ("<table><thead><tr><th>check</th><th>what</th><th>value</th><th>limit</th><th>margin</th>"
                      f"<th>unit</th><th></th></tr></thead><tbody>{rows}</tbody></table>" if rows else "")
                   + (f"<p>Warnings:</p><ul>{warn}</ul>" if warn else ""))
    return "".join(out)


def _plots(comparison: Comparison) -> tuple[str, str]:
    """(head scripts, body) of the comparison plots: BokehJS inline once, one div per plot."""
    try:
        from bokeh.embed import components

        from .plots import bokeh_js, comparison_plots
    except ModuleNotFoundError as e:
        if not (e.name or "").startswith(("bokeh", "explorer.views.plots")):
            raise
        raise DesignError("plots", f"the report's plots need {e.name} (Bokeh: pip install 'explorer[panels]'); "
                          "or leave them out (plots=False, --no-plots)") from None

    plots = comparison_plots(comparison)
    script, divs = components({name: p.figure for name, p in plots.items()})
    body = "".join(f"<div class='plot' data-plot='{_e(name)}'><h3>{_e(name)}</h3>{div}</div>"
                   for name, div in divs.items())
    return bokeh_js() + script, f"<div class='plots'>{body}</div>"


def _markdown(text: str) -> str:
    import mistune
    return mistune.create_markdown(escape=True, plugins=["table", "strikethrough"])(text)


def output_html(o: dict) -> str:
    kind = o.get("output_type")
    if kind == "stream":
        return f"<pre class='stream'>{_e(''.join(o.get('text', '')))}</pre>"
    if kind == "error":
        return f"<pre class='fail'>{_e(o.get('ename', ''))}: {_e(o.get('evalue', ''))}</pre>"
    data = o.get("data", {}) if isinstance(o.get("data"), dict) else {}
    if "image/png" in data:
        png = "".join(data["image/png"]).replace("\n", "")
        if re.fullmatch(r"[A-Za-z0-9+/=]*", png):
            return f"<img alt='figure' src='data:image/png;base64,{png}'>"
    page = "".join(data.get("text/html", ""))
    if page and not re.search(r"<\s*(script|iframe|object|embed|link|meta|base)\b", page, re.I):
        return f"<div class='html-output'>{page}</div>"
    if "text/plain" in data:
        interactive = any(k.startswith(("application/vnd.jupyter.widget", "application/vnd.bokehjs"))
                          or k == "application/javascript" for k in data)
        note = " <i>(interactive output in the notebook; its plots are drawn in this report's Plots section)</i>" \
            if interactive else ""
        if "class='explorer-plot'" in page:  # a plot of explorer.views.plots: its script is not copied
            note = (" <i>(a plot in the notebook, drawn there; the comparison's plots are drawn in this "
                    "report's Plots section)</i>")
        return f"<pre>{_e(''.join(data['text/plain']))}</pre>{note}"
    return ""


def _notebook(source) -> str:
    """The notebook's cells and stored outputs, without any of its scripts."""
    if isinstance(source, dict):
        nb = source
    else:
        text = read_bounded(source, limit=MAX_NOTEBOOK_BYTES, field="notebook", what="the notebook")
        try:
            nb = json.loads(text)
        except json.JSONDecodeError as e:
            raise DesignError("notebook", f"not a Jupyter notebook: {e.msg} (line {e.lineno})", str(source)) from None
    if not isinstance(nb, dict) or not isinstance(nb.get("cells"), list):
        raise DesignError("notebook", "not a Jupyter notebook (no list of cells)")
    out = []
    for c in nb["cells"]:
        if not isinstance(c, dict):
            continue
        src = c.get("source", "")
        src = "".join(src) if isinstance(src, list) else str(src)
        if c.get("cell_type") == "markdown":
            out.append(f"<div class='cell md'>{_markdown(src)}</div>")
        elif c.get("cell_type") == "code":
            outs = "".join(output_html(o) for o in c.get("outputs", []) if isinstance(o, dict))
            out.append(f"<div class='cell code'><pre class='src'>{_e(src)}</pre>{outs}</div>")
    return "".join(out)


def report_html(design, *, rules=None, notebook=None, title: str | None = None, plots: bool = True) -> str:
    """The self-contained HTML report of a design.

    Parameters
    ----------
    design : Design, dict, path or JSON text
        Anything :func:`~explorer.design.load_design` accepts.
    rules : rules or rule file, optional
        Anything :func:`~explorer.rules.check_rules` accepts; their outcomes are listed.
    notebook : path or dict, optional
        A filled Jupyter notebook whose cells and stored outputs are included (scripts and
        interactive widgets left out: the report's own plots stand for them).
    title : str, optional
        Defaults to the design's title.
    plots : bool
        Draw the comparison plots (needs Bokeh).

    Returns
    -------
    str
        One HTML document that loads nothing from outside.
    """
    d = load_design(design)
    comparison = evaluate(d)
    report = None
    if rules is not None:
        from ..rules import check_rules, load_rules, rules_to_dict
        rule_list = load_rules(rules) if isinstance(rules, (str, os.PathLike, dict)) else tuple(rules)
        report = check_rules(d, rule_list, comparison=comparison)
    nb_html = _notebook(notebook) if notebook is not None else ""
    head_js, plots_html = _plots(comparison) if plots else ("", "")
    title = title or d.title
    cautions = "".join(f"<li>[{_e(r.label)}] {_e(c)}</li>" for r in comparison.options for c in r.cautions)
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        f"<meta http-equiv='Content-Security-Policy' content=\"{_CSP}\">",
        f"<title>{_e(title)}</title><style>{_STYLE}</style>{head_js}</head><body>",
        f"<h1>{_e(title)}</h1>",
        f"<div class='caution' id='caution'><p><b>{_e(CAUTION)}</b></p>"
        + (f"<ul>{cautions}</ul>" if cautions else "") + "</div>",
        "<h2>Verdict</h2>", _verdicts(comparison),
    ]
    if report is not None:
        state = "ok" if report.ok else "fail"
        parts += [f"<h2 id='rules'>Design rules: <span class='{state}'>"
                  f"{'all hold' if report.ok else f'{len(report.broken)} broken'}</span></h2>", report._repr_html_()]
    parts += ["<h2>Side by side</h2>", comparison_html(comparison),
              "<h2>Checks per option</h2>", _checks(comparison)]
    if plots_html:
        parts += ["<h2>Plots</h2>", plots_html]
    if nb_html:
        parts += ["<h2>The notebook</h2>", f"<div class='notebook'>{nb_html}</div>"]
    parts += ["<h2>Reproduce</h2>",
              "<p>This file embeds the design file (block <code>explorer-design</code>), the evaluation "
              "(<code>explorer-result</code>)" + (" and the rules (<code>explorer-rules</code>)" if report else "")
              + ". With explorer: <code>from explorer.views.report import read_report; "
              "explorer.evaluate(read_report('this.html')['design'])</code> gives these numbers again.</p>",
              _json_block("explorer-design", design_to_dict(d)),
              _json_block("explorer-result", comparison.to_dict())]
    if report is not None:
        parts += [_json_block("explorer-rules", rules_to_dict(report_rules(report))),
                  _json_block("explorer-rules-report", report.to_dict())]
    parts.append("</body></html>")
    return "\n".join(parts)


def report_rules(report) -> tuple:
    """The distinct rules of a report, in order (a rule for every option appears once)."""
    seen, out = set(), []
    for o in report.outcomes:
        if id(o.rule) not in seen:
            seen.add(id(o.rule))
            out.append(o.rule)
    return tuple(out)


def write_report(design, path, **kw) -> str:
    """Write :func:`report_html` to ``path`` (temporary file first, so a failure keeps an old report)."""
    text = report_html(design, **kw)
    tmp = f"{os.fspath(path)}.tmp"
    try:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except OSError as e:
        raise DesignError("--out", f"cannot write the report ({e.strerror})", os.fspath(path)) from None
    return text


def read_report(source) -> dict:
    """The JSON blocks of a report (path or HTML text): ``{"design": ..., "result": ..., ...}``.

    Keys are the block ids without ``explorer-`` (``design``, ``result``, ``rules``,
    ``rules-report``); blocks the report does not hold are absent.
    """
    text = source
    if not (isinstance(source, str) and source.lstrip().startswith("<")):
        with open(source, encoding="utf-8") as fh:
            text = fh.read()
    out = {}
    for block_id in REPORT_BLOCKS:
        m = re.search(rf'<script type="application/json" id="{block_id}">(.*?)</script>', text, re.S)
        if m:
            out[block_id.removeprefix("explorer-")] = json.loads(m.group(1))
    if "design" not in out:
        raise DesignError("", "not an explorer report (no explorer-design block)")
    return out
