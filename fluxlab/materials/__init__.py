"""Magnetic materials: B-H curves and the reluctivity tables the solver uses, the built-in
steel grades with their loss and mechanical data, and B-H curves read from CSV files."""
