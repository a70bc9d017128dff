"""The optical layer: physical defaults with their sources, the figures of a path and whether a
transceiver closes it.
"""
