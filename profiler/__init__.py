"""terrahop: terrain-aware point-to-point radio path profiler.

The package is named ``profiler``; the command is ``terrahop``.
"""

__version__ = "0.1.0"
