"""The machine and sweep files as data: the schema (keys, units, limits), key paths, TOML
reading, the frozen machine dataclasses (``types``) and the validated machine file
(``machine_file``: :func:`load_machine`, :func:`machine_from_dict`, :func:`replace_path`)."""
