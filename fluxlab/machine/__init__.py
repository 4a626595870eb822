"""The machine as an electrical object: winding layout, the assembled model (currents,
rotor position zero), flux linkage, Park transform, air-gap torque, dq relations."""
