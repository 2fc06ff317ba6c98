#!/usr/bin/env python3
"""Writes the calibration-fit reference fixture from NumPy's least-squares polynomial fit
(`numpy.polyfit`, PyPI `numpy`): for invented sets of measured points (pulse width in µs sent,
joint angle in degrees read off a protractor, with reading noise), the straight-line and the
quadratic fit of angle on pulse, and their residuals.

Deterministic: a fixed seed, Python's own `random`, numbers written with repr after rounding
to 12 significant digits and residuals to 1e-9° (so a last-bit difference between LAPACK
builds does not change the file). Run with the pinned requirements.

    python tests/reference/generate_calibration_fit.py [--out DIR]
"""

import argparse
import json
import os
import random

import numpy as np

SEED = 20261204
HERE = os.path.dirname(os.path.abspath(__file__))


def rounded(x):
    return float(f"{x:.12g}")


def point_set(rng, name, count, slope_deg_per_us, bow_deg, noise_deg):
    """Pulses spread over 700–2300 µs; angle = slope·(p − 1500) + bow·x² + noise, x in [−1, 1]."""
    low, high = rng.uniform(650.0, 1000.0), rng.uniform(2000.0, 2350.0)
    pulses = sorted(round(low + (high - low) * k / (count - 1)) for k in range(count))
    centre, half = 0.5 * (pulses[0] + pulses[-1]), 0.5 * (pulses[-1] - pulses[0])
    angles = []
    for p in pulses:
        x = (p - centre) / half
        angle = slope_deg_per_us * (p - 1500.0) + bow_deg * x * x + rng.gauss(0.0, noise_deg)
        angles.append(round(angle, 1))  # a protractor is read to a tenth at best
    out = {"name": name, "pulses_us": pulses, "angles_deg": angles}
    for degree, key in ((1, "linear"), (2, "quadratic")):
        if len(pulses) <= degree:
            continue
        coefficients = np.polyfit(pulses, angles, degree)  # highest power first
        fitted = np.polyval(coefficients, pulses)
        out[key] = {
            "coefficients_high_first": [rounded(c) for c in coefficients],
            "residuals_deg": [round(a - f, 9) + 0.0 for a, f in zip(angles, fitted)],
        }
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=os.path.join(HERE, "fixtures"))
    args = parser.parse_args()
    rng = random.Random(SEED)
    sets = [
        point_set(rng, "two points", 2, 0.09, 0.0, 0.0),
        point_set(rng, "three points, noisy", 3, -0.1, 0.0, 0.4),
        point_set(rng, "four points, straight", 4, 0.095, 0.0, 0.2),
        point_set(rng, "five points, bowed", 5, 0.09, 6.0, 0.2),
        point_set(rng, "seven points, bowed the other way", 7, -0.085, -4.0, 0.3),
        point_set(rng, "nine points, straight", 9, 0.1, 0.0, 0.3),
    ]
    os.makedirs(args.out, exist_ok=True)
    with open(os.path.join(args.out, "calibration_fit.json"), "w", encoding="utf-8") as f:
        json.dump({"source": "numpy.polyfit", "sets": sets}, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
