"""Propagation losses: free space, diffraction, gases, rain."""
