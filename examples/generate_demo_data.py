#!/usr/bin/env python3
"""Write the invented demo data sets of ellipsa into this directory.

ALL OF THIS DATA IS INVENTED. There is no real plant, machine or measurement
behind it: a small hand-made physical model of a cap-moulding line plus
pseudo-random noise, written so that the screening examples have something
realistic-looking to work on.

Standard library only (random.Random with an explicit seed, math, datetime),
so any python3 reproduces the files byte for byte:

    python3 examples/generate_demo_data.py            # seed 20240514
    python3 examples/generate_demo_data.py --seed 7 --out /tmp/demo

Files (see README.md next to this script for columns and units):
    moulding_line.csv, moulding_line_faults.csv
    moulding_reference.csv
    moulding_new_batch.csv, moulding_new_batch_faults.csv
    thermocouple_wide.csv, thermocouple_wide_faults.csv
"""

import argparse
import datetime
import math
import os
import random

DEFAULT_SEED = 20240514

# Process settings of the two moulds (invented). Each mould runs its own
# press, cooling circuit and settings, so the two groups are well apart.
MOULDS = {
    "A": dict(melt=230.0, cooling=14.0, pressure=850.0, hold=3.00,
              cycle=12.00, mass=2.850, diameter=28.050),
    "B": dict(melt=245.0, cooling=18.0, pressure=770.0, hold=2.40,
              cycle=10.50, mass=2.790, diameter=27.980),
}

# Shot-to-shot noise and the couplings between variables (same for both).
MELT_SD = 2.5             # C
COOLING_SD = 0.3          # C, plus a slow chiller swing below
COOLING_SWING = 0.4       # C amplitude
COOLING_PERIOD_MIN = 12.0  # chiller on/off cycle
PRESSURE_PER_C = -6.0     # bar per C: hotter melt flows easier
PRESSURE_SD = 6.0         # bar
HOLD_SD = 0.04            # s
MASS_PER_BAR = 0.0006     # g per bar: more pressure packs more resin
MASS_PER_HOLD_S = 0.15    # g per s of hold time
MASS_SD = 0.006           # g
CYCLE_PER_HOLD_S = 1.0    # the hold time is part of the cycle
CYCLE_PER_COOLING_C = 0.25  # controller waits longer with warmer water
CYCLE_SD = 0.05           # s
DIAMETER_PER_G = 1.2      # mm per g: a better packed cap shrinks less
DIAMETER_PER_COOLING_C = -0.015  # warmer water -> hotter ejection -> shrink
DIAMETER_PER_CYCLE_S = 0.02      # longer in the mould -> cooler ejection
DIAMETER_SD = 0.008       # mm

COLUMNS = ["shot_id", "timestamp", "mould", "melt_temp_C", "cooling_water_C",
           "injection_pressure_bar", "hold_time_s", "cycle_time_s",
           "cap_mass_g", "cap_diameter_mm"]
FORMATS = {"melt_temp_C": "%.2f", "cooling_water_C": "%.2f",
           "injection_pressure_bar": "%.1f", "hold_time_s": "%.3f",
           "cycle_time_s": "%.3f", "cap_mass_g": "%.4f",
           "cap_diameter_mm": "%.4f"}

# Planted faults: (mould, shot number within the mould) -> (type, description,
# effect). Effects are chosen to break the correlations while staying inside
# the usual range of each single variable, except the two plain one-variable
# faults (melt_spike, cycle_stall).
FAULT_TEXT = {
    "short_shot": "cavity not filled: mass low although pressure and hold time normal",
    "wet_resin": "damp resin: pressure low for the melt temperature while mass slightly high",
    "blocked_cooling": "blocked cooling channel: water reading normal but cap ejected hot and shrinks",
    "pressure_drift": "pressure sensor drifting upward: reading high but cap mass unchanged",
    "melt_spike": "melt thermocouple spike: reading far above normal; the rest normal",
    "cycle_stall": "take-out robot stall after ejection: cycle time far too long; cap normal",
}


def simulate_shot(rng, s, minutes, fault=None, drift_bar=0.0):
    """One shot of mould settings s at time `minutes`; returns recorded values."""
    cooling = (s["cooling"] + COOLING_SWING * math.sin(2.0 * math.pi * minutes / COOLING_PERIOD_MIN)
               + rng.gauss(0.0, COOLING_SD))
    melt = s["melt"] + rng.gauss(0.0, MELT_SD)
    pressure = s["pressure"] + PRESSURE_PER_C * (melt - s["melt"]) + rng.gauss(0.0, PRESSURE_SD)
    if fault == "wet_resin":
        pressure -= 30.0
    hold = s["hold"] + rng.gauss(0.0, HOLD_SD)
    mass = (s["mass"] + MASS_PER_BAR * (pressure - s["pressure"])
            + MASS_PER_HOLD_S * (hold - s["hold"]) + rng.gauss(0.0, MASS_SD))
    if fault == "wet_resin":
        mass += 0.028            # thin melt flashes: heavier than its pressure says
    cycle = (s["cycle"] + CYCLE_PER_HOLD_S * (hold - s["hold"])
             + CYCLE_PER_COOLING_C * (cooling - s["cooling"]) + rng.gauss(0.0, CYCLE_SD))
    diameter = (s["diameter"] + DIAMETER_PER_G * (mass - s["mass"])
                + DIAMETER_PER_COOLING_C * (cooling - s["cooling"])
                + DIAMETER_PER_CYCLE_S * (cycle - s["cycle"]) + rng.gauss(0.0, DIAMETER_SD))
    if fault == "short_shot":
        mass -= 0.032            # the rim is there (diameter normal), resin is missing
    if fault == "blocked_cooling":
        diameter -= 0.055
    if fault == "cycle_stall":
        cycle += 9.0
    if fault == "melt_spike":
        melt += 33.0
    pressure += drift_bar        # the sensor drifts, the process does not
    return dict(melt_temp_C=melt, cooling_water_C=cooling, injection_pressure_bar=pressure,
                hold_time_s=hold, cycle_time_s=cycle, cap_mass_g=mass, cap_diameter_mm=diameter)


def simulate_period(rng, day, counts, starts_min, faults, missing):
    """Both moulds running side by side; rows merged in time order.

    counts: {mould: shots}; starts_min: {mould: start minute after 06:00};
    faults: {(mould, k): (type, drift_bar)}; missing: {(mould, k): (column, text)}.
    Returns (rows, fault_list) with fault_list entries (shot_id, row, type, text).
    """
    t0 = datetime.datetime.combine(day, datetime.time(6, 0, 0))
    shots = []
    for mould, n in counts.items():
        s = MOULDS[mould]
        seconds = starts_min[mould] * 60.0
        for k in range(1, n + 1):
            ftype, drift = faults.get((mould, k), (None, 0.0))
            values = simulate_shot(rng, s, seconds / 60.0, ftype, drift)
            seconds += values["cycle_time_s"]
            row = {"shot_id": "%s-%04d" % (mould, k), "mould": mould,
                   "timestamp": (t0 + datetime.timedelta(seconds=round(seconds))).isoformat()}
            for col, fmt in FORMATS.items():
                row[col] = fmt % values[col]
            if (mould, k) in missing:
                col, text = missing[(mould, k)]
                row[col] = text
            shots.append((seconds, mould, k, row, ftype))
    shots.sort(key=lambda x: (x[0], x[1]))
    rows, found = [], []
    for i, (_, _, _, row, ftype) in enumerate(shots, start=1):
        rows.append(row)
        if ftype is not None:
            found.append((row["shot_id"], i, ftype, FAULT_TEXT[ftype]))
    return rows, found


def write_csv(path, header, rows):
    with open(path, "w", newline="", encoding="ascii") as f:
        f.write(",".join(header) + "\n")
        for row in rows:
            cells = [row[c] for c in header] if isinstance(row, dict) else row
            assert all("," not in c and "\n" not in c for c in cells)  # no quoting needed
            f.write(",".join(cells) + "\n")


def write_faults(path, found):
    write_csv(path, ["shot_id", "data_row", "fault_type", "description"],
              [[sid, str(r), t, d] for sid, r, t, d in found])


def moulding_line(rng, out):
    faults = {("A", 57): ("short_shot", 0.0), ("B", 88): ("short_shot", 0.0),
              ("A", 140): ("blocked_cooling", 0.0), ("A", 141): ("blocked_cooling", 0.0),
              ("A", 211): ("pressure_drift", 35.0), ("A", 212): ("pressure_drift", 42.0),
              ("A", 213): ("pressure_drift", 50.0),
              ("B", 150): ("wet_resin", 0.0), ("B", 151): ("wet_resin", 0.0),
              ("B", 152): ("wet_resin", 0.0),
              ("A", 300): ("melt_spike", 0.0), ("B", 201): ("cycle_stall", 0.0)}
    missing = {("A", 20): ("cooling_water_C", ""), ("B", 40): ("cap_mass_g", "NA"),
               ("A", 250): ("injection_pressure_bar", "NA"), ("B", 120): ("cap_diameter_mm", "")}
    rows, found = simulate_period(rng, datetime.date(2024, 5, 14), {"A": 360, "B": 240},
                                  {"A": 0.0, "B": 25.0}, faults, missing)
    write_csv(os.path.join(out, "moulding_line.csv"), COLUMNS, rows)
    write_faults(os.path.join(out, "moulding_line_faults.csv"), found)


def reference_and_new_batch(rng, out):
    rows, found = simulate_period(rng, datetime.date(2024, 5, 13), {"A": 180, "B": 120},
                                  {"A": 0.0, "B": 5.0}, {}, {})
    assert not found
    write_csv(os.path.join(out, "moulding_reference.csv"), COLUMNS, rows)
    faults = {("A", 30): ("short_shot", 0.0), ("A", 80): ("blocked_cooling", 0.0),
              ("B", 40): ("wet_resin", 0.0), ("B", 41): ("wet_resin", 0.0),
              ("A", 101): ("melt_spike", 0.0)}
    missing = {("B", 60): ("cooling_water_C", "NA")}
    rows, found = simulate_period(rng, datetime.date(2024, 5, 15), {"A": 120, "B": 80},
                                  {"A": 0.0, "B": 3.0}, faults, missing)
    write_csv(os.path.join(out, "moulding_new_batch.csv"), COLUMNS, rows)
    write_faults(os.path.join(out, "moulding_new_batch_faults.csv"), found)


def cholesky(a):
    """Lower factor of a small symmetric positive definite matrix (list of lists)."""
    n = len(a)
    low = [[0.0] * n for _ in range(n)]
    for j in range(n):
        d = a[j][j] - sum(low[j][k] ** 2 for k in range(j))
        assert d > 0.0, "not positive definite"
        low[j][j] = math.sqrt(d)
        for i in range(j + 1, n):
            low[i][j] = (a[i][j] - sum(low[i][k] * low[j][k] for k in range(j))) / low[j][j]
    return low


def thermocouple_wide(rng, out, n_tc=60, n_shots=40):
    """Thermocouples on a ring around the mould: correlation rho^(ring distance),
    plus a common mode (the whole mould warmer or cooler) and a fixed profile
    (hotter near the hot-runner gate at position 1)."""
    rho, local_sd, common_sd = 0.92, 0.45, 0.8
    cov = [[local_sd ** 2 * rho ** min(abs(i - j), n_tc - abs(i - j)) for j in range(n_tc)]
           for i in range(n_tc)]
    low = cholesky(cov)
    profile = [45.0 + 6.0 * math.cos(2.0 * math.pi * i / n_tc) for i in range(n_tc)]
    hot_spots = {17: (20, "tc21-tc24"), 33: (46, "tc47-tc50")}   # shot -> first index
    bump = [1.2, 2.4, 2.4, 1.2]                                   # C, a local hot spot
    header = ["shot_id"] + ["tc%02d" % (i + 1) for i in range(n_tc)]
    rows, found = [], []
    for k in range(1, n_shots + 1):
        z = [rng.gauss(0.0, 1.0) for _ in range(n_tc)]
        common = rng.gauss(0.0, common_sd)
        x = [profile[i] + common + sum(low[i][j] * z[j] for j in range(i + 1)) for i in range(n_tc)]
        if k in hot_spots:
            first, label = hot_spots[k]
            for off, b in enumerate(bump):
                x[first + off] += b
            found.append(("T-%03d" % k, k, "hot_spot",
                          "local hot spot on %s: neighbours high while the ring around is normal" % label))
        rows.append(["T-%03d" % k] + ["%.2f" % v for v in x])
    write_csv(os.path.join(out, "thermocouple_wide.csv"), header, rows)
    write_faults(os.path.join(out, "thermocouple_wide_faults.csv"), found)


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    parser = argparse.ArgumentParser(description="Write the invented ellipsa demo data.")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED)
    parser.add_argument("--out", default=here, help="output directory (default: this script's)")
    args = parser.parse_args()
    os.makedirs(args.out, exist_ok=True)
    # One generator per file family, so changing one family leaves the others as they are.
    moulding_line(random.Random(args.seed * 10 + 1), args.out)
    reference_and_new_batch(random.Random(args.seed * 10 + 2), args.out)
    thermocouple_wide(random.Random(args.seed * 10 + 3), args.out)


if __name__ == "__main__":
    main()
