"""Analytic estimates (Erlang B, Kaufman-Roberts, reduced-load fixed point) and their comparison
with the simulation.
"""
