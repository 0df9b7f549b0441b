"""A :class:`~explorer.rules.RulesReport` as text and as a plain HTML table (no JavaScript)."""

from __future__ import annotations

import html

__all__ = ["rules_text", "rules_html"]


def _head(report) -> str:
    n, b = len(report.outcomes), len(report.broken)
    return f"all {n} design rules hold" if not b else f"{b} of {n} design rules BROKEN"


def rules_text(report) -> str:
    """The title line and one line per outcome (``rule '...' (kind) on 'option': holds|BROKEN: figures``)."""
    return "\n".join([f"{report.title}: {_head(report)}"] + [f"  {o.message}" for o in report.outcomes])


def rules_html(report) -> str:
    """Status, rule, option and figures per outcome, broken ones in red."""
    e = html.escape
    rows = "".join(
        f"<tr class='{'holds' if o.ok else 'broken'}'><td style='color:{'#1b5e20' if o.ok else '#b71c1c'}'>"
        f"{'holds' if o.ok else 'BROKEN'}</td><td>{e(o.rule.title())}</td><td>{e(o.rule.rule)}</td>"
        f"<td>{e(o.option)}</td><td style='text-align:left'>{e(o.check.text)}</td></tr>"
        for o in report.outcomes)
    return (f"<div class='explorer-rules'><b>{e(_head(report))}</b><table><thead><tr><th>status</th><th>rule</th>"
            f"<th>kind</th><th>option</th><th>figures</th></tr></thead><tbody>{rows}</tbody></table></div>")
