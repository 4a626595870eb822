"""Meshing with gmsh: one part per rotor and stator, joined on the sliding circle into a
:class:`~fluxlab.mesh.machine_mesh.MachineMesh` (scikit-fem MeshTri, region tags)."""
