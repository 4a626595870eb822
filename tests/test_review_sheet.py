"""The review sheet's rated-point rows: every number with its unit, the envelope's iron loss
and efficiency when given, and a plain "n/a" pointing to --full when not."""

from types import SimpleNamespace

from fluxlab.report.sheet import rated_figures, sheet_summary

SUMMARY = {
    "current_peak_A": 25.0, "current_angle_deg": 60.0, "current_density_rms_A_per_mm2": 5.97,
    "speed_rpm": 1500.0, "torque_mean_Nm": 49.4, "power_W": 7761.0,
    "terminal_voltage_peak_V": 309.6, "power_factor": 0.692, "power_factor_2d": 0.702,
    "Ld_apparent_H": 0.0724, "Lq_apparent_H": 0.0115, "end_leakage_H": 0.000795,
    "Ld_with_end_leakage_H": 0.0732, "Lq_with_end_leakage_H": 0.0123,
    "saliency_apparent": 6.29, "copper_temperature_C": 115.0, "phase_resistance_Ohm": 0.588,
    "copper_loss_W": 551.5,
}
# dimensionless quantities; every other row names its unit in parentheses
UNITLESS = ("power factor", "saliency", "efficiency")


def test_rows_carry_units_and_say_what_needs_the_envelope():
    rows = rated_figures(sheet_summary(SUMMARY))
    for label, _ in rows:
        assert "(" in label or label.startswith(UNITLESS), label
    values = dict(rows)
    assert values["iron loss (W)"] == "n/a (evaluate --full)"
    assert values["efficiency (no mech. loss)"] == "n/a (evaluate --full)"
    assert values["terminal voltage, phase peak (V)"] == "309.6"
    assert values["current density in the slots (A/mm² rms)"] == "5.97"


def test_envelope_fills_iron_loss_efficiency_and_the_voltage_limit():
    envelope = SimpleNamespace(
        rated_point={"iron_loss_W": 125.7, "mechanical_loss_W": 30.0, "efficiency": 0.9163},
        settings=SimpleNamespace(voltage_limit_peak_V=326.2))
    summary = sheet_summary(SUMMARY, envelope)
    assert summary["efficiency"] == 0.9163 and summary["iron_loss_W"] == 125.7
    values = dict(rated_figures(summary))
    assert values["iron loss (W) / mechanical (W)"] == "125.7 / 30"
    assert values["efficiency (mech. loss included)"] == "0.916"
    assert values["terminal voltage, phase peak (V) / limit"] == "309.6 / 326.2"
