"""Old import path of the knife-edge formulas: see :mod:`profiler.losses.knife_edge`."""

from .knife_edge import fresnel_kirchhoff_v, knife_edge_loss_db, knife_edge_loss_exact_db

__all__ = ["fresnel_kirchhoff_v", "knife_edge_loss_db", "knife_edge_loss_exact_db"]
