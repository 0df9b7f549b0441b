"""Plain-words view of the envelope analysis (worst corner and Monte Carlo of one option)."""

from __future__ import annotations

from ..units import format_eng

__all__ = ["envelope_text"]


def envelope_text(worst, mc) -> str:
    """One line for an option: the worst corner of the rail minimum and the Monte Carlo probabilities.

    Both probabilities are given: of losing the margin (the rail minimum below the requirement
    max(UVLO off, V_GS needed) + margin, ``p_margin``) and of a UVLO trip (below UVLO off, ``p_trip``,
    with its Clopper–Pearson interval).

    Parameters
    ----------
    worst : WorstCase
        From :func:`explorer.tolerance.worst_case`.
    mc : MonteCarlo
        From :func:`explorer.tolerance.monte_carlo` for the same option.
    """
    where = worst.corner_text or worst.corner
    return (f"{worst.label}: worst corner rail min {format_eng(worst.rail_min, 'V')} "
            f"({'margin' if worst.holds else 'short by'} {format_eng(abs(worst.margin), 'V')} to the "
            f"requirement, {'holds' if worst.holds else 'FAILS'}) at {where}; "
            f"P(margin lost) = {mc.p_margin:.4g}; "
            f"P(UVLO trip) = {mc.p_trip:.4g} "
            f"[{100 * mc.confidence:g} % interval {mc.ci[0]:.3g} .. {mc.ci[1]:.3g}] "
            f"over {mc.n} samples, seed {mc.seed}")
