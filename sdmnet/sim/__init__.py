"""The engine and what runs it: occupancy and first fit, one replication on SimPy, sweeps of tasks,
intervals over replications.
"""
