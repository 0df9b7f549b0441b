"""Plain-words view of the envelope analysis (worst corner and Monte Carlo of one option)."""

from __future__ import annotations

from ..units import format_eng

__all__ = ["envelope_text"]


def envelope_text(worst, mc) -> str:
    """One line for an option: worst corner of the rail minimum and the Monte Carlo trip probability.

    Parameters
    ----------
    worst : WorstCase
        From :func:`explorer.tolerance.worst_case`.
    mc : MonteCarlo
        From :func:`explorer.tolerance.monte_carlo` for the same option.
    """
    return (f"{worst.label}: worst corner rail min {format_eng(worst.rail_min, 'V')} "
            f"(margin {worst.margin:+.3g} V, {'holds' if worst.holds else 'FAILS'}) at {worst.corner}; "
            f"P(rail < UVLO off) = {mc.p_trip:.4g} "
            f"[{100 * mc.confidence:g} % interval {mc.ci[0]:.3g} .. {mc.ci[1]:.3g}] "
            f"over {mc.n} samples, seed {mc.seed}")
