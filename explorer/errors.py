"""Project exceptions and warnings.

Every error that bad input can raise is a :class:`DesignError`; it subclasses
``ValueError`` so generic callers can catch it, and it carries the field path,
the offending value and what is allowed, so a command line, a notebook or a
panel can show one plain line.
"""

from __future__ import annotations

__all__ = ["DesignError", "RuleViolation", "ModelValidityWarning", "ExplorerWarning"]


class DesignError(ValueError):
    """Bad or inconsistent input.

    Parameters
    ----------
    path : str
        Field path inside the design, e.g. ``"options[1].c_fly"``; empty for the
        whole file.
    problem : str
        What is wrong and what is allowed, in plain words.
    value : object, optional
        The value that was given (shown with ``repr``).
    """

    def __init__(self, path: str, problem: str, value: object = ...):
        self.path = path
        self.problem = problem
        self.value = value
        shown = "" if value is ... else f" (got {value!r})"
        text = f"{path}: {problem}{shown}" if path else f"{problem}{shown}"
        super().__init__(text)

    def __reduce__(self):  # keep pickling / copying working with the custom init
        return (type(self), (self.path, self.problem, self.value))


class RuleViolation(AssertionError):
    """A design no longer meets one or more of its design rules (:func:`explorer.rules.assert_rules`).

    An ``AssertionError``, so a broken rule fails a test, a notebook cell or CI like a failed
    ``assert``. The message names each broken rule, its option and its figures.

    Attributes
    ----------
    report : explorer.rules.RulesReport
        Every rule's outcome.
    """

    def __init__(self, report):
        self.report = report
        broken = report.broken
        lines = [f"{len(broken)} of {len(report.outcomes)} design rules broken for {report.title!r}:"]
        lines += [f"  {o.message}" for o in broken]
        super().__init__("\n".join(lines))

    def __reduce__(self):
        return (type(self), (self.report,))


class ExplorerWarning(UserWarning):
    """Base class of the warnings this package emits."""


class ModelValidityWarning(ExplorerWarning):
    """An input lies outside the range a model is valid for; the result is less trustworthy."""
