"""What a scenario means on its graph: switching units per architecture, candidate routes, load per
datacenter pair.
"""
