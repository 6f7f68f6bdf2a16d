"""Sparse direct-stiffness engine for plane and space frames and trusses."""
