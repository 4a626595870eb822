"""Results to files: CSV tables, the review and comparison sheets, figures (``plots``), and
the writers of a whole evaluation."""
