"""Coverage from a hub: every cell around it as the link engine would see a link to it (terrahop coverage).

:mod:`.engine` plans a run and evaluates blocks of radials, :mod:`._kernels` holds the radial sweep,
:mod:`.grid` the output grid, :mod:`.run` the staged, resumable execution (this process, a pool, Dask),
:mod:`.output` the writers.  No click here: the command is :mod:`profiler.cli.coverage`.
"""
