"""Command line: ``python -m explorer demo | evaluate FILE [--json] [--rank RULE] | netlist FILE --label L [--out PATH] | envelope FILE [--samples N] [--seed S] [--json] [--strict] | check DESIGN RULES [--json] | size FILE [--label L] [--series E12] [--headroom 2] [--i-max 2A] [--json] | report DESIGN [--rules R] [--notebook NB] --out HTML``.

Exit codes: 0 success, 1 a design rule is broken (``check``), a margin is lost
(``envelope --strict``) or ``size`` found nothing that works, 2 bad input (one line ``error: <field path>: <problem>``
on stderr, never a traceback).
"""

from __future__ import annotations

import argparse
import json
import sys
import warnings

from .compare import CAUTION, RANKINGS, evaluate
from .demo import DEMO
from .design import design_to_dict, load_design
from .errors import DesignError, ExplorerWarning


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit code 2
        sys.stderr.write(f"error: {message}\n")
        raise SystemExit(2)


def _parser() -> argparse.ArgumentParser:
    p = _Parser(prog="python -m explorer",
                description="Compare floating supplies for high-side gate drivers of a bridge leg.")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)
    d = sub.add_parser("demo", help="print the built-in demo design (an invented scenario) as a design file")
    d.add_argument("--evaluate", action="store_true", help="print the demo comparison instead")
    e = sub.add_parser("evaluate", help="evaluate a design file and compare its options")
    e.add_argument("file", help="design file (explorer-design JSON); '-' reads standard input")
    e.add_argument("--json", action="store_true", help="print the comparison as explorer-result JSON")
    e.add_argument("--rank", default="overhead", choices=sorted(RANKINGS), help="ranking rule")
    e.add_argument("--explain", action="store_true", help="add what each row of the table means")
    n = sub.add_parser("netlist", help="write the SPICE netlist of one option, driven by the design's schedule")
    n.add_argument("file", help="design file (explorer-design JSON); '-' reads standard input")
    n.add_argument("--label", required=True, help="label of the option to export")
    n.add_argument("--out", help="write to this file instead of standard output")
    n.add_argument("--cycles", type=int, help="switching periods to simulate (default: start-up plus a few periods)")
    n.add_argument("--corner", default="nominal", choices=("nominal", "min", "max"), help="capacitance corner")
    v = sub.add_parser("envelope", help="worst-case corners and Monte Carlo of the rail for each option")
    v.add_argument("file", help="design file (explorer-design JSON); '-' reads standard input")
    v.add_argument("--label", action="append", help="option to analyse (repeatable; default: all)")
    v.add_argument("--samples", type=int, default=10_000, help="Monte Carlo samples per option (default 10000)")
    v.add_argument("--seed", type=int, default=0, help="random seed (same seed, same numbers)")
    v.add_argument("--json", action="store_true", help="print the figures as JSON")
    v.add_argument("--quiet", action="store_true", help="no progress on standard error (for CI logs)")
    v.add_argument("--strict", action="store_true",
                   help="exit with code 1 when an analysed option fails its margin at the worst corner")
    c = sub.add_parser("check", help="check a design against its design rules (explorer-rules JSON); "
                                      "exit 1 when a rule is broken")
    c.add_argument("file", help="design file (explorer-design JSON); '-' reads standard input")
    c.add_argument("rules", help="rule file (explorer-rules JSON)")
    c.add_argument("--json", action="store_true", help="print the outcome of every rule as JSON")
    z = sub.add_parser("size", help="size an option's parts for the worst tolerance corner, with headroom")
    z.add_argument("file", help="design file (explorer-design JSON); '-' reads standard input")
    z.add_argument("--label", action="append", help="option to size (repeatable; default: all)")
    z.add_argument("--series", default="E12", choices=("E6", "E12", "E24"), help="IEC 60063 series (default E12)")
    z.add_argument("--headroom", default="2",
                   help="factor over each bare minimum (default 2, common practice)")
    z.add_argument("--i-max", help="inrush limit of a bootstrap's first pulse, e.g. 2A (sizes R_boot)")
    z.add_argument("--json", action="store_true", help="print the sized values as JSON")
    r = sub.add_parser("report", help="write a self-contained HTML hand-off report (opens offline)")
    r.add_argument("file", help="design file (explorer-design JSON); '-' reads standard input")
    r.add_argument("--rules", help="rule file (explorer-rules JSON) whose status the report shows")
    r.add_argument("--notebook", help="filled notebook (.ipynb) whose cells and outputs the report includes")
    r.add_argument("--no-plots", action="store_true", help="leave the plots out (no Bokeh needed)")
    r.add_argument("--out", required=True, help="HTML file to write")
    return p


#: API parameter names as the command line spells them, so an error names the flag the user typed.
_FLAGS = {"label": "--label", "n_cycles": "--cycles", "n": "--samples", "corner": "--corner",
          "headroom": "--headroom", "i_max": "--i-max", "series": "--series"}


def _labels(design, labels):
    """The labels to work on (default all); an unknown one is an error naming --label."""
    known = [o.label for o in design.options]
    for lab in labels or ():
        if lab not in known:
            raise DesignError("--label", "no option labelled " + repr(lab) + "; labels: "
                              + ", ".join(map(repr, known)), lab)
    return list(labels or known)


def main(argv=None) -> int:
    args = _parser().parse_args(argv)
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ExplorerWarning)
            if args.command == "demo":
                if args.evaluate:
                    sys.stdout.write(evaluate(DEMO).to_text() + "\n")
                else:
                    sys.stdout.write(json.dumps(design_to_dict(load_design(DEMO), readable=True), indent=2,
                                                ensure_ascii=False) + "\n")
                return 0
            src = sys.stdin.read() if args.file == "-" else args.file
            if args.file == "-" and not src.lstrip().startswith("{"):
                raise DesignError("", "standard input does not hold a JSON object")
            if args.command == "netlist":
                return _netlist(args, load_design(src), caught)
            if args.command == "envelope":
                return _envelope(args, load_design(src), caught)
            if args.command == "check":
                return _check(args, load_design(src), caught)
            if args.command == "size":
                return _size(args, load_design(src), caught)
            if args.command == "report":
                return _report(args, load_design(src), caught)
            result = evaluate(load_design(src), rank=args.rank)
            if args.json:
                sys.stdout.write(result.to_json(indent=2) + "\n")
            else:
                sys.stdout.write(result.to_text(explain=args.explain) + "\n")
        for w in caught:
            sys.stderr.write(f"warning: {w.message}\n")
        return 0
    except DesignError as e:
        if e.path in _FLAGS:
            e = DesignError(_FLAGS[e.path], e.problem, e.value)
        sys.stderr.write(f"error: {e}\n")
        return 2


def _netlist(args, design, caught) -> int:
    """``netlist``: the option's netlist with its control block, to a file or standard output."""
    from .netlist import export_netlist

    _labels(design, [args.label])
    text = export_netlist(design, args.label, n_cycles=args.cycles, corner=args.corner, standalone=True)
    if args.out:
        try:
            with open(args.out, "w", encoding="ascii") as fh:
                fh.write(text)
        except OSError as e:
            raise DesignError("--out", f"cannot write the file ({e.strerror})", args.out) from None
    else:
        sys.stdout.write(text)
    for w in caught:
        sys.stderr.write(f"warning: {w.message}\n")
    return 0


def _envelope(args, design, caught) -> int:
    """``envelope``: worst corner and Monte Carlo per option, as text or JSON."""
    from .tolerance import monte_carlo, worst_case
    from .views import envelope_text

    labels = _labels(design, args.label)
    if not 1 <= args.samples <= 10_000_000:
        raise DesignError("--samples", "expected a whole number from 1 to 10000000", args.samples)
    results = []
    for lab in labels:
        def progress(done, total, lab=lab):
            if not args.quiet:
                sys.stderr.write(f"\rMonte Carlo {lab}: {done}/{total}")
                if done == total:
                    sys.stderr.write("\n")
        w = worst_case(design, lab)
        results.append((w, monte_carlo(design, lab, args.samples, seed=args.seed, progress=progress)))
    if args.json:
        rows = [{"worst_case": w.to_dict(), "monte_carlo": mc.to_dict()} for w, mc in results]
        sys.stdout.write(json.dumps({"format": "explorer-envelope", "version": 1, "title": design.title,
                                     "options": rows, "caution": CAUTION}, indent=2, ensure_ascii=False) + "\n")
    else:
        for w, mc in results:
            sys.stdout.write(envelope_text(w, mc) + "\n")
        sys.stdout.write("\n" + CAUTION + "\n")
    for w in caught:
        sys.stderr.write(f"warning: {w.message}\n")
    failed = [w for w, _ in results if not w.holds]
    return 1 if (args.strict and failed) else 0


def _check(args, design, caught) -> int:
    """``check``: every rule's outcome; exit 1 when one is broken."""
    from .rules import check_rules, load_rules

    report = check_rules(design, load_rules(args.rules))
    if args.json:
        sys.stdout.write(json.dumps(report.to_dict(), indent=2, ensure_ascii=False) + "\n")
    else:
        sys.stdout.write(report.to_text() + "\n")
    for w in caught:
        sys.stderr.write(f"warning: {w.message}\n")
    return 0 if report.ok else 1
def _size(args, design, caught) -> int:
    """``size``: sized values with headroom per option, as text or JSON; exit 1 when one cannot be sized."""
    from .sizing import recommend
    from .units import parse_eng

    labels = _labels(design, args.label)
    headroom = parse_eng(args.headroom, "--headroom", "-")
    i_max = None if args.i_max is None else parse_eng(args.i_max, "--i-max", "A")
    if i_max is not None and i_max <= 0:
        raise DesignError("--i-max", "expected a current > 0 [A]", args.i_max)
    recs = [recommend(design, lab, series=args.series, headroom=headroom, i_max=i_max) for lab in labels]
    if args.json:
        sys.stdout.write(json.dumps({"format": "explorer-sizing", "version": 1, "title": design.title,
                                     "options": [r.to_dict() for r in recs], "caution": CAUTION},
                                    indent=2, allow_nan=False) + "\n")
    else:
        sys.stdout.write("\n".join(r.to_text() for r in recs) + "\n\n" + CAUTION + "\n")
    for w in caught:
        sys.stderr.write(f"warning: {w.message}\n")
    return 0 if all(r.ok for r in recs) else 1


def _report(args, design, caught) -> int:
    """``report``: write the HTML hand-off report; one summary line on standard error."""
    from .views.report import read_report, write_report

    text = write_report(design, args.out, rules=args.rules, notebook=args.notebook, plots=not args.no_plots)
    blocks = read_report(text)
    status = ""
    if "rules-report" in blocks:
        rep = blocks["rules-report"]
        broken = sum(not o["ok"] for o in rep["outcomes"])
        status = f"; design rules: {'all hold' if not broken else f'{broken} broken'}"
    for w in caught:
        sys.stderr.write(f"warning: {w.message}\n")
    sys.stderr.write(f"wrote {args.out} ({len(text.encode('utf-8'))} bytes){status}\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
