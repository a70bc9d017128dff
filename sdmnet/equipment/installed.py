"""Installed transceivers: what each site must hold so that it rarely runs short.

The engine keeps, per site, the distribution of transceiver modules and lanes in use as seen by
the arrivals of the pairs that end there (a Poisson stream, so it sees the time-average
distribution: Poisson arrivals see time averages).  A site is given the smallest count N whose
overflow probability is at most ``[transceiver] overflow``: P(in use > N) <= overflow.  Network
figures are sums over sites (docs/model.md, section 4): modules are bought per site, so the sum
of per-site counts, not the network-wide simultaneous count, is what is installed.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from ..sim.stats import PointSummary

__all__ = ["installed_count", "InstalledTransceivers", "installed_transceivers"]


def installed_count(histogram: Mapping[int, int], overflow: float) -> int:
    """The smallest N with P(X > N) <= ``overflow`` under the empirical distribution ``histogram``.

    Parameters
    ----------
    histogram : mapping of int to int
        Count in use -> how often it was seen.
    overflow : float
        Highest overflow probability allowed, in (0, 1).

    Returns
    -------
    int
        0 for an empty histogram (a site that never terminates traffic).

    Notes
    -----
    P(X > N) only changes at observed values, so N is one of them: the smallest observed x whose
    tail above it holds at most ``overflow`` of the observations.
    """
    if not 0 < overflow < 1:
        raise ValueError(f"overflow must be in (0, 1), got {overflow}")
    total = sum(histogram.values())
    if total == 0:
        return 0
    allowed = overflow * total * (1 + 1e-12)  # the tolerance keeps 0.001 x 1000 at 1 despite rounding
    above = total
    for value in sorted(histogram):
        above -= histogram[value]
        if above <= allowed:
            return int(value)
    raise AssertionError("unreachable: the tail above the largest value is empty")


@dataclass(frozen=True)
class InstalledTransceivers:
    """Installed transceiver modules and lanes per site (topology order), and their sums.

    Attributes
    ----------
    site_modules, site_lanes : tuple of int
        Per site, each at its own overflow quantile.
    site_mimo_lanes : tuple of int
        Per site, lanes of MIMO modules (randomly coupled groups received together).
    """

    site_modules: tuple[int, ...]
    site_lanes: tuple[int, ...]
    site_mimo_lanes: tuple[int, ...]

    @property
    def modules(self) -> int:
        """Modules over all sites."""
        return sum(self.site_modules)

    @property
    def lanes(self) -> int:
        """Lanes over all sites."""
        return sum(self.site_lanes)

    @property
    def mimo_lanes(self) -> int:
        """Lanes of MIMO modules over all sites."""
        return sum(self.site_mimo_lanes)


def installed_transceivers(point: PointSummary, overflow: float) -> InstalledTransceivers:
    """Installed modules, lanes and MIMO lanes per site of one simulated point."""

    def per_site(histograms: Sequence[Mapping[int, int]]) -> tuple[int, ...]:
        return tuple(installed_count(h, overflow) for h in histograms)

    return InstalledTransceivers(
        per_site(point.site_transceivers_histogram),
        per_site(point.site_lanes_histogram),
        per_site(point.site_mimo_lanes_histogram),
    )
