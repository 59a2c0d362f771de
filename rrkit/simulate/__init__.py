"""Seeded simulations: resting RR series, artifacts, and the invented demo squad.

Everything here is a simulation with a known ground truth; none of it describes real people.
"""

from ._series import RestingSeries, simulate_rr

__all__ = ["RestingSeries", "simulate_rr"]
