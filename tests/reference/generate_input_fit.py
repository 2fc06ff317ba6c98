#!/usr/bin/env python3
"""Writes the input-arm fit reference fixture from NumPy's least-squares polynomial fit
(`numpy.polyfit`, PyPI `numpy`): for invented input arms (an analog reading 0-4095 taken with
the joint held at a position read off a protractor, in degrees), the straight-line and the
quadratic fit of position on reading, each fit's slope in degrees per reading count, its
residuals, the largest residual by size and their root mean square.

Deterministic: a fixed seed, Python's own `random`, numbers written with repr after rounding
to 12 significant digits and residuals to 1e-9 degrees (so a last-bit difference between
LAPACK builds does not change the file). Run with the pinned requirements.

    python tests/reference/generate_input_fit.py [--out DIR]
"""

import argparse
import json
import math
import os
import random

import numpy as np

SEED = 20261205
HERE = os.path.dirname(os.path.abspath(__file__))


def rounded(x):
    return float(f"{x:.12g}")


def point_set(rng, name, readings, per_count_deg, bow_deg, noise_deg, slip=None):
    """position = per_count * (reading - 2048) + bow * x^2 + noise, x in [-1, 1] over the
    readings; `slip` = (index, degrees) moves one point off, as a misread protractor would."""
    centre, half = 0.5 * (readings[0] + readings[-1]), 0.5 * (readings[-1] - readings[0])
    positions = []
    for k, r in enumerate(readings):
        x = (r - centre) / half
        position = per_count_deg * (r - 2048) + bow_deg * x * x + rng.gauss(0.0, noise_deg)
        if slip is not None and slip[0] == k:
            position += slip[1]
        positions.append(round(position, 1))  # a protractor is read to a tenth at best
    out = {"name": name, "readings": readings, "positions_deg": positions}
    for degree, key in ((1, "linear"), (2, "quadratic")):
        if len(readings) <= degree:
            continue
        coefficients = np.polyfit(readings, positions, degree)  # highest power first
        fitted = np.polyval(coefficients, readings)
        residuals = [a - f for a, f in zip(positions, fitted)]
        out[key] = {
            "coefficients_high_first": [rounded(c) for c in coefficients],
            "residuals_deg": [round(r, 9) + 0.0 for r in residuals],
            "worst_residual_deg": round(max(abs(r) for r in residuals), 9) + 0.0,
            "rms_residual_deg": round(math.sqrt(sum(r * r for r in residuals) / len(residuals)), 9)
            + 0.0,
        }
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=os.path.join(HERE, "fixtures"))
    args = parser.parse_args()
    rng = random.Random(SEED)
    sets = [
        point_set(rng, "two points", [900, 3100], 0.066, 0.0, 0.0),
        point_set(rng, "three points, noisy", [700, 2000, 3400], -0.07, 0.0, 0.3),
        point_set(rng, "five points, straight", [600, 1300, 2050, 2800, 3500], 0.065, 0.0, 0.2),
        point_set(rng, "six points, bowed", [500, 1100, 1700, 2400, 3000, 3600], 0.06, 5.0, 0.2),
        point_set(
            rng, "five points, one misread", [800, 1500, 2100, 2800, 3400], 0.066, 0.0, 0.2,
            slip=(2, 6.0),
        ),
        point_set(rng, "three points, coarse", [2000, 2030, 2060], 1.2, 0.0, 0.1),
    ]
    os.makedirs(args.out, exist_ok=True)
    with open(os.path.join(args.out, "input_fit.json"), "w", encoding="utf-8") as f:
        json.dump({"source": "numpy.polyfit", "sets": sets}, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
