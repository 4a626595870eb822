"""Figures, one module per family: curves, envelope, field, mesh, sweep, winding layout.
Every function takes ``ax`` (created when None) and returns it."""
