"""Write the demo line list (CSV and XLSX) of a fictional unit.

Scenario (invented): the "Fenmoor demonstration works", a small gas
processing and utilities unit whose feed is to rise.  Every name, number
and service here is made up for the demo; none describes a real plant.

The list exercises every column of docs/input.md: gauge and
absolute pressures, US and SI units in headers and cells, volumetric,
mass and standard gas flows, a fourth case (startup), CoolProp fluids, a
mixture and custom fluids, typical factors by valve style, schedules and
inside diameters, historian travel, historian signal names (HISTORY) and per-valve limits.  Some valves were
built to choke, cavitate or flash at their max case (see BUILT_TO); others
to show what the service columns (intent, duty, criticality, dissolved gas)
and the controllability and body checks do (see BUILT_FOR).

Run:  python sample_linelist/make_sample.py
"""
from __future__ import annotations

import csv
from pathlib import Path

HERE = Path(__file__).resolve().parent

COLUMNS = [
    "tag", "area", "service", "fluid", "phase", "density [kg/m3]", "vapour_pressure [kPa]", "critical_pressure",
    "viscosity [cP]", "molar_mass", "k", "z", "sound_speed", "p_atm [kPa]",
    "flow_min", "p_in_min", "p_out_min", "t_in_min", "quality_in_min", "travel_min",
    "flow_norm", "p_in_norm", "p_out_norm", "t_in_norm", "quality_in_norm", "travel_norm",
    "flow_max", "p_in_max", "p_out_max", "t_in_max", "quality_in_max", "travel_max",
    "flow_startup", "p_in_startup", "p_out_startup", "t_in_startup",
    "valve_size", "rated_cv", "rated_kv", "characteristic", "rangeability", "fl", "xt", "fd", "valve_style", "xfz",
    "pipe_in_id", "pipe_out_id", "pipe_in_size", "pipe_in_schedule", "pipe_out_size", "pipe_out_schedule",
    "pipe_out_wall", "noise_limit [dBA]", "velocity_limit [m/s]", "noise_an", "noise_stp", "intent", "duty", "criticality", "dissolved_gas",
    "hist_flow", "hist_p_in", "hist_p_out", "hist_t_in", "hist_travel",
]

# The historian signals of the valves that have process history (make_history.py writes a month of it).
# A quantity left out is taken from the valve's cases (history.csv's `assumed` column says which).
HISTORY = {
    "LV-1201": {"flow": "FI-1201.PV", "travel": "LV-1201.OP"},
    "LV-1203": {"flow": "FI-1203.PV", "p_in": "PI-1203A.PV", "p_out": "PI-1203B.PV", "travel": "LV-1203.OP"},
    "FV-2103": {"flow": "FI-2103.PV", "p_in": "PI-2103A.PV", "p_out": "PI-2103B.PV", "t_in": "TI-2103.PV",
                "travel": "FV-2103.OP"},
    "FV-2104": {"flow": "FI-2104.PV", "p_in": "PI-2104A.PV", "p_out": "PI-2104B.PV", "travel": "FV-2104.OP"},
    "LV-2201": {"flow": "FI-2201.PV", "p_in": "PI-2201A.PV", "travel": "LV-2201.OP"},
    "FV-2106": {"flow": "FI-2106.PV", "p_in": "PI-2106A.PV", "p_out": "PI-2106B.PV", "travel": "FV-2106.OP"},
    "PV-3102": {"flow": "FI-3102.PV", "p_in": "PI-3102A.PV", "p_out": "PI-3102B.PV", "t_in": "TI-3102.PV",
                "travel": "PV-3102.OP"},
    "FV-3103": {"flow": "FI-3103.PV", "p_in": "PI-3103A.PV", "p_out": "PI-3103B.PV", "travel": "FV-3103.OP"},
    "FV-4107": {"flow": "FI-4107.PV", "p_in": "PI-4107A.PV", "p_out": "PI-4107B.PV", "travel": "FV-4107.OP"},
    "PV-5101": {"flow": "FI-5101.PV", "p_in": "PI-5101A.PV", "p_out": "PI-5101B.PV", "t_in": "TI-5101.PV",
                "travel": "PV-5101.OP"},
}
# What the history was built to show (tests/test_history.py checks each).
HISTORY_BUILT_FOR = {
    "drift": "FV-2103",       # observed travel drifts away from predicted, about 4.5 points a month
    "stuck": "PV-3102",       # inlet pressure transmitter flat for three days while flow moves
    "gap": "FV-3103",         # outlet pressure missing for ten hours (in the long-layout file)
    "shutdown": "FV-2104",    # area 200 shut down for a day: flow near zero, valves closed
    "bad_quality": "LV-1201", # 'Shutdown', 'Bad' and 'I/O Timeout' strings in its flow signal
}

# What the sample was built to show at the max case (tests check the audit finds it).
BUILT_TO = {
    "choke": ["FV-3107", "PV-4102", "HV-5101"],
    "cavitate": ["FV-2104", "LV-2201"],
    "flash": ["LV-1203", "LV-1204"],
}
# What the later additions were built to show (tests/test_ranking.py checks each).
BUILT_FOR = {
    "over_capacity": "FV-2106",            # cannot pass its max flow: first among the urgent valves
    "designed_flash": "LV-1205",           # intent = flashing: flashing is a note ...
    "flash_twin": "LV-1206",               # ... where its otherwise equal twin without intent is plan
    "designed_choke": "HV-5101",           # intent = choked, emergency duty
    "startup_noise": "PV-5104",            # a vent used at start-up: noise is not urgent
    "dissolved_gas": "LV-3111",            # rich amine letdown
    "below_range": "FV-7105",              # smallest case below rated Cv / R
    "oversized": "LV-1202",                # never opens past 20 %
    "capacity_margin": "FV-4107",          # a little more flow reaches full travel
    "line_velocity": "FV-2107",            # fast in the line and at the body inlet
    "body_small": "FV-6106",               # a 1 in body in a 4 in line
    "cv_implausible": "FV-6107",           # rated Cv far beyond the body size
    "outlet_choked_flashing": "LV-1204",   # flashing letdown whose outlet reaches the mixture's speed of sound
    "sonic_gas": "HV-5101",                # gas outlet at Mach 1 or more
    "wet_steam": "PV-5106",                # quality_in 0.95, and t_in 'sat' in another case
    "saturated_liquid": "LV-5107",         # quality_in 0: boiler blowdown
    "below_dew_point": "FV-5108",          # saturated steam written 0.6 K below its saturation temperature
}


def case(flow, p_in, p_out, t_in, travel="", quality_in=""):
    return {"flow": flow, "p_in": p_in, "p_out": p_out, "t_in": t_in, "travel": travel, "quality_in": quality_in}


def valve(tag, area, service, fluid, cases, size, **kw):
    row = {"tag": tag, "area": area, "service": service, "fluid": fluid, "valve_size": size}
    for name, c in cases.items():
        for field, value in c.items():
            if value != "":
                row[f"{field}_{name}"] = value
    row.update(kw)
    return row


V = []
# Area 100: condensate and hot water
V += [
    valve("LV-1201", "100 Condensate", "HP condensate pot level", "Water",
          {"min": case("4 m3/h", "9 barg", "4.5 barg", 120), "norm": case("9 m3/h", "9 barg", "4.5 barg", 125),
           "max": case("14 m3/h", "9 barg", "4.4 barg", 128)}, "50 mm", rated_cv=30, fl=0.9, xt=0.72, fd=0.46,
          pipe_in_size=2, pipe_in_schedule="80", pipe_out_size=3, pipe_out_schedule="40"),
    valve("LV-1202", "100 Condensate", "Condensate to deaerator", "Water",
          {"min": case("6000 kg/h", "6.5 barg", "1.8 barg", 95), "norm": case("11000 kg/h", "6.5 barg", "1.8 barg", 98),
           "max": case("16000 kg/h", "6.4 barg", "1.9 barg", 100)}, 50, rated_cv=46, characteristic="linear",
          fl=0.9, fd=0.46, xt=0.7, travel_norm=48),
    valve("LV-1203", "100 Condensate", "Flash drum letdown (hot condensate)", "Water",
          {"min": case("3 m3/h", "6 barg", "2 barg", 145), "norm": case("6 m3/h", "6 barg", "1.5 barg", 150),
           "max": case("9 m3/h", "6 barg", "0.3 barg", 152)}, 40, rated_cv=25, valve_style="angle_contoured",
          pipe_in_id=52.5, pipe_out_id=102.3, velocity_limit=30),
    valve("LV-1204", "100 Condensate", "Blowdown flash vessel inlet", "Water",
          {"min": case("1.5 m3/h", "12 barg", "1.0 barg", 178), "norm": case("2.5 m3/h", "12 barg", "0.6 barg", 182),
           "max": case("3.5 m3/h", "12 barg", "0.2 barg", 185)}, 25, rated_cv=8, fl=0.9, fd=0.46, xt=0.72,
          pipe_out_size=2, pipe_out_schedule="80"),
    # Two equal hot-condensate letdowns into a flash drum; only the first says it is built to flash.
    valve("LV-1205", "100 Condensate", "Condensate flash drum A inlet (designed to flash)", "Water",
          {"min": case("2 m3/h", "5 barg", "0.6 barg", 155), "max": case("3 m3/h", "5 barg", "0.5 barg", 156)},
          "3 in", rated_cv=30, fl=0.9, fd=0.46, xt=0.72, intent="flashing", criticality="low"),
    valve("LV-1206", "100 Condensate", "Condensate flash drum B inlet", "Water",
          {"min": case("2 m3/h", "5 barg", "0.6 barg", 155), "max": case("3 m3/h", "5 barg", "0.5 barg", 156)},
          "3 in", rated_cv=30, fl=0.9, fd=0.46, xt=0.72, criticality="low"),
    valve("TV-1301", "100 Condensate", "Hot water return temperature", "Water",
          {"min": case("60 gpm", "70 psig", "45 psig", "180 degF"), "norm": case("110 gpm", "70 psig", "42 psig", "185 degF"),
           "max": case("150 gpm", "68 psig", "40 psig", "190 degF")}, "3 in", rated_cv=95, fl=0.9, fd=0.46, xt=0.72,
          pipe_in_size=4, pipe_in_schedule="40", pipe_out_size=4, pipe_out_schedule="40"),
]
# Area 200: boiler feed water and cooling water
V += [
    valve("FV-2101", "200 Utilities water", "Cooling water to lube oil cooler", "Water",
          {"min": case(40, 5.0, 3.2, 28), "norm": case(70, 5.0, 3.0, 30), "max": case(95, 4.9, 2.9, 32)}, 80,
          rated_cv=160, fl=0.85, fd=0.42, xt=0.6, characteristic="linear", travel_norm=55),
    valve("FV-2102", "200 Utilities water", "Cooling water to overhead condenser", "Water",
          {"min": case(250, 5.2, 3.6, 28), "norm": case(420, 5.1, 3.3, 30), "max": case(560, 5.0, 3.0, 33)}, 200,
          rated_cv=1600, valve_style="butterfly_centred_70", pipe_in_size=10, pipe_in_schedule="STD",
          pipe_out_size=10, pipe_out_schedule="STD"),
    valve("FV-2103", "200 Utilities water", "Boiler feed water to steam drum", "Water",
          {"min": case("20 t/h", "62 barg", "48 barg", 105), "norm": case("38 t/h", "62 barg", "47 barg", 105),
           "max": case("52 t/h", "61 barg", "46 barg", 106)}, 80, rated_cv=60, fl=0.9, fd=0.46, xt=0.72,
          travel_max=92, pipe_in_size=4, pipe_in_schedule="160", pipe_out_size=4, pipe_out_schedule="160",
          criticality="high"),
    valve("FV-2104", "200 Utilities water", "Feed pump minimum-flow recirculation", "Water",
          {"min": case("6 t/h", "95 barg", "1.5 barg", 105), "norm": case("9 t/h", "95 barg", "1.5 barg", 105),
           "max": case("12 t/h", "96 barg", "1.2 barg", 106)}, 40, rated_cv=5.5, fl=0.92, fd=0.35, xt=0.75,
          xfz=0.25, noise_limit=83),
    valve("PV-2105", "200 Utilities water", "Demineralised water header pressure", "Water",
          {"min": case(5, 7.0, 4.5, 20), "norm": case(12, 7.0, 4.0, 20), "max": case(18, 6.9, 3.8, 21)}, 50,
          rated_kv=40, fl=0.9, fd=0.46, xt=0.72, rangeability=30),
    valve("LV-2201", "200 Utilities water", "Deaerator level (feed from condensate tank)", "Water",
          {"min": case(8, 9.5, 1.3, 60), "norm": case(14, 9.5, 1.25, 62), "max": case(19, 9.6, 1.2, 65)}, 40,
          rated_cv=22, fl=0.8, fd=0.46, xt=0.7),
    valve("FV-2106", "200 Utilities water", "Boiler feed water to new economiser (after the feed rise)", "Water",
          {"min": case("15 t/h", "62 barg", "50 barg", 105), "norm": case("25 t/h", "62 barg", "49 barg", 105),
           "max": case("36 t/h", "61 barg", "48 barg", 106)}, 50, rated_cv=9, fl=0.9, fd=0.46, xt=0.72,
          criticality="high"),
    valve("FV-2107", "200 Utilities water", "Cooling water to new product cooler", "Water",
          {"min": case(90, 6.0, 4.6, 28), "norm": case(150, 6.0, 4.2, 30), "max": case(200, 5.9, 3.9, 32)}, 80,
          rated_cv=250, fl=0.85, fd=0.42, xt=0.6, characteristic="linear", pipe_in_size=4, pipe_in_schedule="40",
          pipe_out_size=4, pipe_out_schedule="40"),
    valve("TV-2301", "200 Utilities water", "Glycol-water chiller bypass", "custom",
          {"min": case(15, 6.0, 4.8, 5), "norm": case(30, 6.0, 4.5, 5), "max": case(42, 5.9, 4.3, 6)}, 80,
          rated_cv=120, phase="liquid", **{"density [kg/m3]": 1045, "vapour_pressure [kPa]": 1.2,
                                           "critical_pressure": "22000 kPa", "viscosity [cP]": 3.8,
                                           "sound_speed": 1600}, fl=0.9, fd=0.46, xt=0.72),
]
# Area 300: gas processing
V += [
    valve("PV-3101", "300 Gas processing", "Inlet separator gas to compressor", "Methane[0.9]&Ethane[0.07]&Propane[0.03]",
          {"min": case("30000 Nm3/h", 55, 51, 30), "norm": case("52000 Nm3/h", 55, 50, 30),
           "max": case("70000 Nm3/h", 54.5, 49, 32)}, 150, rated_cv=420, valve_style="globe_cage_characterised",
          pipe_in_size=8, pipe_in_schedule="40", pipe_out_size=8, pipe_out_schedule="40"),
    valve("PV-3102", "300 Gas processing", "Fuel gas letdown to burner header", "Methane",
          {"min": case("800 kg/h", "40 barg", "6 barg", 25), "norm": case("1500 kg/h", "40 barg", "6 barg", 25),
           "max": case("2300 kg/h", "39 barg", "6.5 barg", 20)}, 50, rated_cv=30, fl=0.9, xt=0.72, fd=0.46,
          pipe_out_size=4, pipe_out_schedule="40", pipe_out_wall="0.25 in", noise_limit=85,
          noise_an=-4.0, noise_stp=0.25),  # the valve maker's acoustic data
    valve("FV-3103", "300 Gas processing", "Nitrogen purge to dryer beds", "Nitrogen",
          {"min": case("200 Nm3/h", "8 barg", "5 barg", 20), "norm": case("450 Nm3/h", "8 barg", "5 barg", 20),
           "max": case("650 Nm3/h", "8 barg", "4.8 barg", 20)}, 25, rated_cv=9, fl=0.9, xt=0.72, fd=0.46),
    valve("FV-3104", "300 Gas processing", "Regeneration gas heater outlet", "Methane",
          {"min": case("2.0 MMSCFD", 32, 30, 240), "norm": case("3.5 MMSCFD", 32, 29.5, 250),
           "max": case("5.0 MMSCFD", 31.5, 29, 260)}, 80, rated_cv=110, valve_style="globe_contoured_flow_to_open"),
    valve("PV-3105", "300 Gas processing", "CO2 stripper overhead back-pressure", "CarbonDioxide",
          {"min": case("4000 kg/h", 3.2, 2.2, 40), "norm": case("7000 kg/h", 3.2, 2.1, 42),
           "max": case("9500 kg/h", 3.1, 2.0, 45)}, 150, rated_cv=480, valve_style="butterfly_eccentric_70",
          pipe_out_id=254.5),
    valve("FV-3106", "300 Gas processing", "Propane refrigerant to chiller", "Propane",
          {"min": case("9 m3/h", "16 barg", "7 barg", 38), "norm": case("15 m3/h", "16 barg", "6.5 barg", 40),
           "max": case("21 m3/h", "16 barg", "6 barg", 42)}, 50, rated_cv=50, fl=0.9, fd=0.46, xt=0.72),
    valve("FV-3107", "300 Gas processing", "Compressor anti-surge recycle", "Methane[0.9]&Ethane[0.07]&Propane[0.03]",
          {"min": case("20000 kg/h", 72, 30, 45), "norm": case("35000 kg/h", 72, 28, 45),
           "max": case("60000 kg/h", 72, 26, 48), "startup": case("55000 kg/h", 60, 25, 35)}, 150, rated_cv=300,
          fl=0.85, xt=0.6, fd=0.42, pipe_in_size=8, pipe_in_schedule="80", pipe_out_size=10, pipe_out_schedule="80",
          noise_limit=90, duty="startup"),
    valve("HV-3108", "300 Gas processing", "Dryer depressurising", "Methane",
          {"max": case("9000 kg/h", 50, 12, 25)}, 50, rated_cv=75, valve_style="ball_segmented",
          pipe_out_size=4, pipe_out_schedule="40"),
    valve("FV-3109", "300 Gas processing", "Instrument air to header", "Air",
          {"min": case("150 scfh", "100 psig", "80 psig", "70 degF"), "norm": case("300 scfh", "100 psig", "80 psig", "70 degF"),
           "max": case("450 scfh", "100 psig", "78 psig", "75 degF")}, "1 in", rated_cv=1.2, fl=0.9, xt=0.72, fd=0.46),
    valve("PV-3110", "300 Gas processing", "Amine flash drum gas (custom sour gas)", "custom",
          {"min": case("300 kg/h", "6 barg", "0.8 barg", 55), "norm": case("600 kg/h", "6 barg", "0.8 barg", 55),
           "max": case("850 kg/h", "6 barg", "0.9 barg", 58)}, 50, rated_cv=35, phase="gas", molar_mass=22.5,
          k=1.28, z=0.98, **{"viscosity [cP]": 0.012}, fl=0.9, xt=0.72, fd=0.46),
    valve("LV-3111", "300 Gas processing", "Rich amine letdown to flash drum (custom amine)", "custom",
          {"min": case(20, "68 barg", "5 barg", 60), "norm": case(30, "68 barg", "5 barg", 62),
           "max": case(38, "68 barg", "5.2 barg", 65)}, 50, rated_cv=12, phase="liquid",
          **{"density [kg/m3]": 1030, "vapour_pressure [kPa]": 25, "critical_pressure": "20000 kPa",
             "viscosity [cP]": 2.2}, fl=0.9, fd=0.46, xt=0.72, dissolved_gas="yes"),
]
# Area 400: NGL fractionation
V += [
    valve("LV-4101", "400 NGL fractionation", "De-ethaniser bottoms to debutaniser", "Propane[0.6]&Butane[0.4]",
          {"min": case(18, 28, 14, 70), "norm": case(30, 28, 13.5, 72), "max": case(40, 27.5, 13, 75)}, 80,
          rated_cv=110, fl=0.9, fd=0.46, xt=0.72),
    valve("PV-4102", "400 NGL fractionation", "Debutaniser overhead to flare (pressure relief trim)", "Butane",
          {"min": case("1500 kg/h", 8, 1.5, 70), "norm": case("4000 kg/h", 8, 1.3, 72),
           "max": case("9000 kg/h", 8, 1.2, 75)}, 80, rated_cv=140, fl=0.85, xt=0.6, fd=0.42,
          pipe_out_size=6, pipe_out_schedule="40", noise_limit=90),
    valve("FV-4103", "400 NGL fractionation", "Reflux to de-propaniser", "Propane",
          {"min": case("12000 kg/h", 22, 19, 40), "norm": case("20000 kg/h", 22, 18.5, 40),
           "max": case("28000 kg/h", 22, 18, 42)}, 80, rated_cv=120, valve_style="globe_cage_drilled"),
    valve("FV-4104", "400 NGL fractionation", "Natural gasoline product to storage", "n-Hexane",
          {"min": case(8, 6.0, 2.5, 40), "norm": case(14, 6.0, 2.4, 40), "max": case(19, 5.9, 2.3, 42)}, 50,
          rated_cv=55, fl=0.9, fd=0.46, xt=0.72, travel_norm=70),
    valve("TV-4105", "400 NGL fractionation", "Hot oil to reboiler (viscous heat medium)", "custom",
          {"min": case(12, 9.0, 7.0, 60), "norm": case(20, 9.0, 6.5, 65), "max": case(26, 8.8, 6.2, 70)}, 50,
          rated_cv=60, phase="liquid", **{"density [kg/m3]": 905, "vapour_pressure [kPa]": 0.5,
                                           "critical_pressure": "1500 kPa", "viscosity [cP]": 450},
          fl=0.9, fd=0.46, xt=0.72),
    valve("LV-4106", "400 NGL fractionation", "Ammonia refrigerant receiver level", "Ammonia",
          {"min": case("2000 kg/h", "14 barg", "3 barg", 35), "norm": case("3500 kg/h", "14 barg", "2.8 barg", 35),
           "max": case("5000 kg/h", "14 barg", "2.5 barg", 36)}, 25, rated_cv=6.5, fl=0.9, fd=0.46, xt=0.72),
    valve("FV-4107", "400 NGL fractionation", "Propane product to storage (after the feed rise)", "Propane",
          {"min": case(20, 20, 15, 20), "norm": case(30, 20, 14.5, 20), "max": case(38, 20, 14.2, 21)}, 50,
          rated_cv=13.5, fl=0.9, fd=0.46, xt=0.72),
]
# Area 500: steam and flare
V += [
    valve("PV-5101", "500 Steam and flare", "HP to MP steam letdown", "Water",
          {"min": case("5 t/h", "40 barg", "11 barg", 400), "norm": case("12 t/h", "40 barg", "11 barg", 400),
           "max": case("18 t/h", "40 barg", "10.5 barg", 405)}, 100, rated_cv=150, phase="steam",
          fl=0.9, xt=0.72, fd=0.46, pipe_in_size=4, pipe_in_schedule="80", pipe_out_size=8, pipe_out_schedule="40",
          noise_limit=85),
    valve("PV-5102", "500 Steam and flare", "MP to LP steam letdown", "Water",
          {"min": case("3 t/h", "10 barg", "3.5 barg", 250), "norm": case("7 t/h", "10 barg", "3.5 barg", 250),
           "max": case("10 t/h", "10 barg", "3.3 barg", 255)}, 100, rated_cv=190, fl=0.9, xt=0.72, fd=0.46,
          pipe_out_size=10, pipe_out_schedule="40"),
    valve("HV-5101", "500 Steam and flare", "Flare knockout drum vent to flare", "Methane[0.9]&Ethane[0.07]&Propane[0.03]",
          {"max": case("30000 kg/h", 30, 1.8, 30)}, 100, rated_cv=260, valve_style="ball_full_bore",
          pipe_out_size=12, pipe_out_schedule="STD", noise_limit=95, intent="choked", duty="emergency"),
    valve("TV-5103", "500 Steam and flare", "Desuperheater spray water", "Water",
          {"min": case("0.3 m3/h", "60 barg", "12 barg", 110), "norm": case("0.8 m3/h", "60 barg", "12 barg", 110),
           "max": case("1.4 m3/h", "60 barg", "11.5 barg", 112)}, 25, rated_cv=1.6, fl=0.9, fd=0.46, xt=0.72,
          xfz=0.3),
    valve("PV-5104", "500 Steam and flare", "LP steam vent to atmosphere", "Water",
          {"max": case("4 t/h", "3.5 barg", "0.05 barg", 160)}, 100, rated_cv=200, phase="steam",
          valve_style="globe_contoured_flow_to_open", pipe_out_size=6, pipe_out_schedule="40", duty="startup"),
    valve("FV-5105", "500 Steam and flare", "Steam to tracing header", "Water",
          {"min": case("300 kg/h", "10 barg", "4 barg", 184), "norm": case("600 kg/h", "10 barg", "4 barg", 185),
           "max": case("800 kg/h", "10 barg", "4 barg", 186)}, 25, rated_cv=12, phase="gas", fl=0.9, xt=0.72, fd=0.46,
          p_atm=98.0),
    valve("PV-5106", "500 Steam and flare", "Waste-heat drum wet steam to deaerator", "Water",
          {"min": case("1.5 t/h", "6 barg", "0.4 barg", "sat", quality_in=""),
           "max": case("4 t/h", "6 barg", "0.3 barg", "", quality_in=0.95)}, 80, rated_cv=70, phase="steam",
          fl=0.9, xt=0.72, fd=0.46, pipe_out_size=6, pipe_out_schedule="40"),
    valve("LV-5107", "500 Steam and flare", "Steam drum continuous blowdown (saturated water)", "Water",
          {"min": case("0.6 t/h", "42 barg", "1.5 barg", "", quality_in=0),
           "max": case("1.2 t/h", "42 barg", "1.5 barg", "", quality_in=0)}, 25, rated_cv=3, fl=0.9, fd=0.46,
          xt=0.72, intent="flashing"),
    valve("FV-5108", "500 Steam and flare", "Saturated steam to sootblowers", "Water",
          {"max": case("2 t/h", "15 barg", "9 barg", 200.8)}, 50, rated_cv=40, phase="steam", fl=0.9, xt=0.72,
          fd=0.46, duty="intermittent"),
]
# Area 600: chemicals and oils
V += [
    valve("FV-6101", "600 Chemicals", "Caustic dosing (custom, dilute)", "custom",
          {"min": case("120 l/min", 5.0, 3.5, 25), "norm": case("200 l/min", 5.0, 3.4, 25),
           "max": case("260 l/min", 5.0, 3.2, 25)}, 40, rated_cv=25, **{"density [kg/m3]": 1220,
                                                                          "vapour_pressure [kPa]": 2.5,
                                                                          "critical_pressure": "21000 kPa",
                                                                          "viscosity [cP]": 4.0}, fl=0.9, fd=0.46, xt=0.72),
    valve("FV-6102", "600 Chemicals", "Methanol injection to inlet header", "Methanol",
          {"min": case("200 kg/h", "70 barg", "56 barg", 20), "norm": case("350 kg/h", "70 barg", "56 barg", 20),
           "max": case("500 kg/h", "70 barg", "55 barg", 20)}, 15, rated_cv=0.4, characteristic="linear",
          fl=0.95, fd=0.2, xt=0.8, pipe_in_size=0.5, pipe_in_schedule="160", pipe_out_size=0.5,
          pipe_out_schedule="160"),
    valve("FV-6103", "600 Chemicals", "Lube oil to compressor bearings", "custom",
          {"min": case(2.0, 4.5, 2.5, 45), "norm": case(3.0, 4.5, 2.3, 48), "max": case(4.0, 4.4, 2.1, 50)}, 25,
          rated_cv=6, **{"density [kg/m3]": 870, "vapour_pressure [kPa]": 0.1, "critical_pressure": "1400 kPa",
                         "viscosity [cP]": 32}, fl=0.9, fd=0.46, xt=0.72, characteristic="quick_opening"),
    valve("PV-6104", "600 Chemicals", "Toluene solvent recovery column pressure", "Toluene",
          {"min": case(3, 4.0, 1.6, 90), "norm": case(5, 4.0, 1.5, 95), "max": case(7, 3.9, 1.4, 100)}, 40,
          rated_cv=14, fl=0.9, fd=0.46, xt=0.72, travel_max=55),
    valve("LV-6105", "600 Chemicals", "Ethanol day tank level", "Ethanol",
          {"min": case(1.0, 3.0, 1.5, 25), "norm": case(2.0, 3.0, 1.4, 25), "max": case(3.5, 3.0, 1.3, 25)}, 25,
          rated_cv=10, valve_style="globe_v_port"),
    valve("FV-6106", "600 Chemicals", "Corrosion inhibitor injection", "Water",
          {"min": case(0.4, 12, 9, 25), "max": case(0.9, 12, 8.5, 25)}, "1 in", rated_cv=1.5, fl=0.9, fd=0.46,
          xt=0.72, pipe_in_size=4, pipe_in_schedule="40", duty="intermittent"),
    valve("FV-6107", "600 Chemicals", "Wash water to desalter (data to confirm)", "Water",
          {"min": case(4, 8, 6, 40), "max": case(8, 8, 5.5, 45)}, 25, rated_cv=160, fl=0.9, fd=0.46, xt=0.72),
]
# Area 700: tank farm (large, low-dp valves)
V += [
    valve("FV-7101", "700 Tank farm", "Crude transfer to export line", "n-Decane",
          {"min": case(250, 9.0, 6.5, 30), "norm": case(400, 9.0, 6.0, 30), "max": case(520, 8.8, 5.6, 32)}, 150,
          rated_cv=900, valve_style="ball_segmented", pipe_in_size=10, pipe_in_schedule="40", pipe_out_size=10,
          pipe_out_schedule="40", **{"viscosity [cP]": 4.5}),
    valve("FV-7102", "700 Tank farm", "Diesel blending", "n-Dodecane",
          {"min": case(20, 6.0, 4.5, 25), "norm": case(45, 6.0, 4.2, 25), "max": case(60, 5.9, 4.0, 27)}, 80,
          rated_cv=230, valve_style="rotary_eccentric_plug"),
    valve("FV-7103", "700 Tank farm", "Firewater ring main make-up", "Water",
          {"min": case(50, 10.0, 7.0, 15), "norm": case(150, 10.0, 6.0, 15), "max": case(300, 10.0, 5.0, 15)}, 150,
          rated_cv=500, fl=0.9, fd=0.46, xt=0.72, characteristic="linear"),
    valve("LV-7104", "700 Tank farm", "Slop oil drum level", "n-Octane",
          {"min": case(0.5, 3.0, 1.2, 30), "norm": case(1.0, 3.0, 1.2, 30), "max": case(2.0, 3.0, 1.1, 30)}, 25,
          rated_cv=10, fl=0.9, fd=0.46, xt=0.72, travel_min=25, criticality="low"),
    valve("FV-7105", "700 Tank farm", "Fire water jockey make-up", "Water",
          {"min": case(0.5, 10.0, 7.0, 15), "norm": case(20, 10.0, 6.5, 15), "max": case(60, 10.0, 6.0, 15)}, 80,
          rated_cv=150, fl=0.9, fd=0.46, xt=0.72, rangeability=30),
]


def main() -> None:
    for r in V:
        for quantity, signal in HISTORY.get(r["tag"], {}).items():
            r[f"hist_{quantity}"] = signal
    rows = [{k: r.get(k, r.get(_bare(k), "")) for k in COLUMNS} for r in V]
    with open(HERE / "fenmoor_unit.csv", "w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=COLUMNS, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    from openpyxl import Workbook
    book = Workbook()
    sheet = book.active
    sheet.title = "line list"
    sheet.append(COLUMNS)
    for r in rows:
        sheet.append([r[k] for k in COLUMNS])
    book.save(HERE / "fenmoor_unit.xlsx")
    print(f"wrote {len(rows)} valves")


def _bare(header: str) -> str:
    """A header without its unit: 'noise_limit [dBA]' -> 'noise_limit'."""
    return header.split(" [")[0]


if __name__ == "__main__":
    main()
