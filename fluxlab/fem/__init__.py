"""The finite-element machinery: assembly of the nonlinear field problem, the sector and
sliding-circle ties, Newton iterations and the sparse direct solvers."""
