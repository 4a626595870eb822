"""Rotor stress at speed: plane-stress finite elements on a lamination sector."""
