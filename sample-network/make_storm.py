#!/usr/bin/env python3
"""Writes the demo storm scenario for the sample network (an invented event).

inflow.csv  - wide form: discharge entering at the top of each headwater reach
lateral.csv - long form: lateral inflow along every reach

A storm cell crosses the catchment from its upper (north-west) tributaries
towards the outlet over 18 hours; headwater reaches rise first. Base flow is
small. Deterministic: no random numbers.
"""
import math

HEADWATERS = ["R12", "R16", "R17", "R21", "R23", "R27", "R30", "R34", "R35", "R39", "R41"]
STEP_H = 0.5
STEPS = 145  # three days at 30-minute steps



def stamp(k):
    minutes = int(round(k * STEP_H * 60))
    day, rem = divmod(6 * 60 + minutes, 24 * 60)
    return f"2026-05-{14 + day:02d}T{rem // 60:02d}:{rem % 60:02d}:00+01:00"


def pulse(t_h, start_h, rise_h, fall_h, peak):
    """A smooth storm hydrograph: sin² rise, exponential-like fall."""
    if t_h <= start_h:
        return 0.0
    if t_h <= start_h + rise_h:
        return peak * math.sin(0.5 * math.pi * (t_h - start_h) / rise_h) ** 2
    return peak * math.exp(-(t_h - start_h - rise_h) / fall_h)


def main():
    with open("inflow.csv", "w") as f:
        f.write("time," + ",".join(HEADWATERS) + "\n")
        for k in range(STEPS):
            t = k * STEP_H
            vals = []
            for i, rid in enumerate(HEADWATERS):
                base = 0.4 + 0.05 * i
                peak = 6.0 + 2.5 * (i % 4)
                vals.append(f"{base + pulse(t, 2.0 + 1.3 * i, 4.0 + 0.5 * (i % 3), 7.0, peak):.4f}")
            f.write(stamp(k) + "," + ",".join(vals) + "\n")
    with open("lateral.csv", "w") as f:
        f.write("reach_id,time,discharge\n")
        for n in range(1, 42):
            rid = f"R{n}"
            for k in range(STEPS):
                t = k * STEP_H
                q = 0.05 + pulse(t, 3.0 + 0.25 * (42 - n) * 0.5, 5.0, 9.0, 0.8 + 0.03 * (n % 7))
                f.write(f"{rid},{stamp(k)},{q:.4f}\n")


if __name__ == "__main__":
    main()
