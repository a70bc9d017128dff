"""Equipment that follows from the topology, the architecture and the traffic: switch ports,
fibers, transceiver modules.
"""
