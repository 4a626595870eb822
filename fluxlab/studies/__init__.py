"""Studies of one machine: the rotor-position rule, the operating-point engine and MTPA,
torque versus position and current angle, saturation curves, flux densities per region,
the whole evaluation (``evaluate``) and the process pool it runs in."""
