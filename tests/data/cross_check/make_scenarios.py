#!/usr/bin/python3
"""Writes the cross-check scenarios of this folder.

Every model parameter is written out in each file (model.md's v1 values and
each v2 element at its off value, then the scenario's own changes), so that
retuning the program's defaults never changes what a cross-check tests.
Run it after changing a scenario here:
    /usr/bin/python3 tests/data/cross_check/make_scenarios.py
"""

import os

HERE = os.path.dirname(os.path.abspath(__file__))

# section -> [(key, value as written in TOML)]; model.md v1 and v2 off values.
BASE = [
    ("fluid", [("density", '"870 kg/m^3"'), ("bulk_modulus", '"1.6 GPa"'), ("air_fraction", "0.0"),
               ("polytropic_index", "1.4"), ("cavitation", "false"), ("vapour_pressure", '"1 kPa"'),
               ("dissolved_air", "0.09"), ("saturation_pressure", '"101325 Pa"'),
               ("air_release_time", '"50 ms"'), ("air_absorption_time", '"2 s"'),
               ("viscosity_grade", '"46 mm^2/s"'), ("viscosity_index", "100.0"),
               ("viscosity_at_100C", '"from index"'), ("temperature", '"40 degC"'),
               ("thermal_expansion", "0.0007")]),
    ("pump", [("displacement", '"45 cm^3/rev"'), ("speed", '"1800 rpm"'), ("max_swash_angle", '"17 deg"'),
              ("leakage_coefficient", "1.29e-12"), ("swash_inertia", '"0.003 kg*m^2"'),
              ("swash_damping", '"1 N*m*s/rad"'), ("pressure_moment", "0.0"), ("swash_friction", '"0 N*m"'),
              ("pistons", "9"), ("flow_ripple", "false")]),
    ("bias_spring", [("rate", '"20 kN/m"'), ("force_at_full_stroke", '"400 N"'), ("arm", '"50 mm"')]),
    ("control_piston", [("diameter", '"18 mm"'), ("arm", '"50 mm"'), ("dead_volume", '"20 cm^3"')]),
    ("compensator", [("setting", '"210 bar"'), ("spool_diameter", '"6 mm"'), ("spring_rate", '"50 kN/m"'),
                     ("spool_mass", '"10 g"'), ("spool_damping", '"20 N*s/m"'), ("spool_travel", '"1 mm"'),
                     ("port_width", '"6 mm"'), ("underlap", '"0.01 mm"'), ("discharge_coefficient", "0.7"),
                     ("flow_forces", "true"), ("bleed_orifice", '"0.4 mm"'), ("control_orifice", '"none"'),
                     ("orifice_discharge_coefficient", "0.7"), ("port_volume", '"5 cm^3"')]),
    ("relief", [("setting", '"none"'), ("override", '"15 bar"'), ("rated_flow", '"100 L/min"')]),
    ("line", [("volume", '"1 L"'), ("tank_pressure", '"0 bar"')]),
    ("load", [("valve_area", '"56.9 mm^2"'), ("discharge_coefficient", "0.7"), ("opening", "1.0")]),
    ("solver", [("transition_pressure", '"10 kPa"'), ("rtol", "1e-6"), ("atol", "1e-6"), ("max_step", '"5 ms"')]),
    ("faults", [("leakage_factor", "1.0"), ("entrained_air", "0.0"), ("bleed_area_factor", "1.0"),
                ("bias_spring_strength", "1.0"), ("spool_friction", '"0 N"'), ("spool_stiction_ratio", "1.5"),
                ("setting_drift", "0.0"), ("line_volume_factor", "1.0"), ("case_pressure", '"0 bar"')]),
]


def slam(close_at, reopen_at, ramp='"5 ms"'):
    return [("load.opening", close_at, "0.0", ramp), ("load.opening", reopen_at, "1.0", ramp)]


SCENARIOS = {
    "cavitation-small-line": dict(
        about="50 mL line, cavitation and air release on: the valve is slammed shut at full flow and "
              "reopened. The control chamber is driven down to vapour pressure and air comes out.",
        duration='"0.4 s"', interval='"0.2 ms"',
        changes={"fluid.cavitation": "true", "line.volume": '"50 mL"', "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=slam('"20 ms"', '"200 ms"')),
    "control-orifice": dict(
        about="A 1 mm orifice between the spool's control port (5 mL) and the control piston; slam and reopen.",
        duration='"0.4 s"', interval='"0.2 ms"',
        changes={"compensator.control_orifice": '"1 mm"', "compensator.port_volume": '"5 cm^3"',
                 "compensator.orifice_discharge_coefficient": "0.65", "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=slam('"20 ms"', '"200 ms"')),
    "relief-deadhead": dict(
        about="Compensator set at 210 bar above a relief valve cracking at 180 bar (override 15 bar at "
              "100 L/min): the valve is shut and the deadhead pressure holds at the relief's.",
        duration='"0.4 s"', interval='"0.2 ms"',
        changes={"relief.setting": '"180 bar"', "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=[("load.opening", '"20 ms"', "0.0", '"5 ms"'), ("load.opening", '"250 ms"', "1.0", '"5 ms"')]),
    "hot-thin-oil": dict(
        about="An oil of 32 mm^2/s at 40 degC and 5.4 mm^2/s at 100 degC (both given) run at "
              "75 degC: thin oil, more leakage, less damping; slam and reopen.",
        duration='"0.4 s"', interval='"0.2 ms"',
        changes={"fluid.viscosity_grade": '"32 mm^2/s"', "fluid.viscosity_at_100C": '"5.4 mm^2/s"',
                 "fluid.temperature": '"75 degC"', "fluid.thermal_expansion": "0.0008", "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=slam('"20 ms"', '"200 ms"')),
    "swash-friction": dict(
        about="Cradle friction 1.5 N*m and a pressure moment: the load valve is closed slowly and opened "
              "again, so the swash sticks and slips (hysteresis).",
        duration='"0.6 s"', interval='"0.2 ms"',
        changes={"pump.swash_friction": '"1.5 N*m"', "pump.pressure_moment": "2e-7", "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=[("load.opening", '"20 ms"', "0.05", '"200 ms"'), ("load.opening", '"300 ms"', "1.0", '"200 ms"')]),
    "ripple-odd": dict(
        about="Flow ripple of 9 pistons at part opening, then a slam (pumping frequency 270 Hz).",
        duration='"0.12 s"', interval='"0.05 ms"',
        changes={"pump.flow_ripple": "true", "pump.pistons": "9", "load.opening": "0.5", "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=[("load.opening", '"50 ms"', "0.0", '"5 ms"')]),
    "ripple-even": dict(
        about="Flow ripple of 8 pistons at full opening (pumping frequency 240 Hz, ripple twice that of 9 "
              "pistons per the kinematic formula).",
        duration='"0.06 s"', interval='"0.05 ms"',
        changes={"pump.flow_ripple": "true", "pump.pistons": "8", "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=[]),
    "all-elements": dict(
        about="Every v2 element on and every fault away from its healthy value (the case of the mutation "
              "test: each parameter matters here): cavitation with oil saturated at 2.5 bar, a control "
              "orifice, a relief valve below the spike, warm oil of VI 120, swash friction and pressure "
              "moment, ripple of 9 pistons, raised tank and case pressure; slam and reopen.",
        duration='"0.12 s"', interval='"0.1 ms"',
        changes={"fluid.air_fraction": "0.002", "fluid.polytropic_index": "1.3", "fluid.cavitation": "true",
                 "fluid.vapour_pressure": '"2 kPa"', "fluid.dissolved_air": "0.08",
                 "fluid.saturation_pressure": '"2.5 bar"', "fluid.air_release_time": '"20 ms"',
                 "fluid.air_absorption_time": '"0.5 s"', "fluid.viscosity_index": "120.0",
                 "fluid.temperature": '"60 degC"',
                 "pump.pressure_moment": "1e-7", "pump.swash_friction": '"0.3 N*m"', "pump.flow_ripple": "true",
                 "compensator.control_orifice": '"1.2 mm"', "compensator.port_volume": '"3 cm^3"',
                 "relief.setting": '"220 bar"', "relief.override": '"10 bar"', "relief.rated_flow": '"60 L/min"',
                 "line.volume": '"0.3 L"', "line.tank_pressure": '"0.5 bar"',
                 "faults.leakage_factor": "1.3", "faults.entrained_air": "0.002", "faults.bleed_area_factor": "1.2",
                 "faults.bias_spring_strength": "0.95", "faults.spool_friction": '"2 N"',
                 "faults.setting_drift": "0.02", "faults.line_volume_factor": "1.1",
                 "faults.case_pressure": '"0.3 bar"', "solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=slam('"10 ms"', '"70 ms"')),
    # Corners of the stop schedules sit between samples (0.1 ms off the 0.2 ms
    # grid): what a sample taken exactly at a step shows is not yet agreed
    # (see the report of the reference helper); these check the motion.
    "swash-stop-ramps": dict(
        about="Full flow with the swash on its full-stroke stop: pump.max_swash_angle ramps 17 -> 10 deg "
              "and back to 17 deg, then steps to 12 deg and back; then at part opening (swash free, "
              "regulating) it ramps 17 -> 9 -> 17 deg.",
        duration='"0.65 s"', interval='"0.2 ms"',
        changes={"solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=[("pump.max_swash_angle", '"30.1 ms"', '"10 deg"', '"30 ms"'),
                ("pump.max_swash_angle", '"120.1 ms"', '"17 deg"', '"30 ms"'),
                ("pump.max_swash_angle", '"220.1 ms"', '"12 deg"', '"0 ms"'),
                ("pump.max_swash_angle", '"300.1 ms"', '"17 deg"', '"0 ms"'),
                ("load.opening", '"350 ms"', "0.1", '"5 ms"'),
                ("pump.max_swash_angle", '"450.1 ms"', '"9 deg"', '"40 ms"'),
                ("pump.max_swash_angle", '"550.1 ms"', '"17 deg"', '"40 ms"')]),
    "spool-stop-ramps": dict(
        about="Full flow with the spool resting on its lower stop: compensator.spool_travel ramps 1 -> 0.5 mm "
              "and back to 1 mm, then steps to 0.6 mm and back; after a slam the setting is stepped down "
              "so the spool rests on its upper stop, and the travel ramps 1 -> 0.5 -> 1 mm again.",
        duration='"0.5 s"', interval='"0.2 ms"',
        changes={"solver.rtol": "1e-8", "solver.atol": "1e-9"},
        events=[("compensator.spool_travel", '"20.1 ms"', '"0.5 mm"', '"30 ms"'),
                ("compensator.spool_travel", '"80.1 ms"', '"1 mm"', '"30 ms"'),
                ("compensator.spool_travel", '"150.1 ms"', '"0.6 mm"', '"0 ms"'),
                ("compensator.spool_travel", '"200.1 ms"', '"1 mm"', '"0 ms"'),
                ("load.opening", '"250 ms"', "0.0", '"5 ms"'),
                ("compensator.setting", '"350 ms"', '"150 bar"', '"0 ms"'),
                ("compensator.spool_travel", '"370.1 ms"', '"0.5 mm"', '"20 ms"'),
                ("compensator.spool_travel", '"410.1 ms"', '"1 mm"', '"20 ms"')]),
}


def write(name, sc):
    changes = dict(sc["changes"])
    lines = ["# Cross-check scenario, written by make_scenarios.py (edit there, not here).",
             "# Invented machine; every parameter is given so that changed defaults leave it alone.",
             "[scenario]", 'name = "cross-check: %s"' % name, 'description = "%s"' % sc["about"],
             "duration = %s" % sc["duration"], "sample_interval = %s" % sc["interval"], ""]
    for section, keys in BASE:
        lines.append("[%s]" % section)
        for key, value in keys:
            full = "%s.%s" % (section, key)
            lines.append("%s = %s" % (key, changes.pop(full, value)))
        lines.append("")
    if changes:
        raise SystemExit("%s: unknown keys %s" % (name, sorted(changes)))
    for target, at, to, ramp in sc["events"]:
        lines += ["[[events]]", "at = %s" % at, 'set = "%s"' % target, "to = %s" % to, "ramp = %s" % ramp, ""]
    with open(os.path.join(HERE, name + ".toml"), "w") as fh:
        fh.write("\n".join(lines))


if __name__ == "__main__":
    for name, sc in SCENARIOS.items():
        write(name, sc)
