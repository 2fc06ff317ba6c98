#!/usr/bin/env python3
"""Writes the kinematics reference fixtures from the `modern_robotics` library (Lynch & Park,
*Modern Robotics*, 2017, and its PyPI library): tool pose (FKinSpace), space Jacobian
(JacobianSpace), gravity torques (GravityForces) and inverse dynamics (InverseDynamics).

Each arm is written as a self-contained chain description that the Rust side turns into an
origin-and-axis chain: per joint its kind, unit axis and a point on it in the base frame with
every joint at zero, and the mass properties of the body it moves (mass in kg, centre of mass
in m and inertia about the centre in kg·m², both in a frame parallel to the base with its origin
at the joint point, at zero); the tool frame at zero (4×4); the payload (kg, a point mass at the
tool point). Three arms repeat the built-in arm types of crates/test-support/src/arms.rs
(bodies lumped as the Rust arm model lumps them); the rest are random chains.

Deterministic: a fixed seed, Python's own `random` (its random() sequence is stable across
versions for an integer seed), numbers written with repr. Run with the pinned requirements.

    python tests/reference/generate_kinematics.py [--out DIR]
"""

import argparse
import json
import math
import os
import random

import modern_robotics as mr
import numpy as np

GRAVITY = 9.80665  # standard gravity, m/s² (CGPM 1901; ISO 80000-3), along −Z
STATES_PER_ARM = 20
RANDOM_CHAINS = 24
SEED = 20261202
HERE = os.path.dirname(os.path.abspath(__file__))


# ---------------------------------------------------------------- mass properties

def point(mass, centre):
    return {"mass": mass, "centre": list(centre), "inertia": [[0.0] * 3 for _ in range(3)]}


def rod_along_x(mass, length):
    across = mass * length * length / 12.0
    return {
        "mass": mass,
        "centre": [length / 2.0, 0.0, 0.0],
        "inertia": [[0.0, 0.0, 0.0], [0.0, across, 0.0], [0.0, 0.0, across]],
    }


def combined(a, b):
    """Two bodies joined rigidly (parallel-axis theorem), in the same frame."""
    mass = a["mass"] + b["mass"]
    if mass <= 0.0:
        return point(0.0, [0.0, 0.0, 0.0])
    ca, cb = np.array(a["centre"]), np.array(b["centre"])
    centre = (ca * a["mass"] + cb * b["mass"]) / mass
    inertia = np.zeros((3, 3))
    for body, c in ((a, ca), (b, cb)):
        d = c - centre
        inertia += np.array(body["inertia"]) + body["mass"] * (np.eye(3) * d.dot(d) - np.outer(d, d))
    return {"mass": mass, "centre": centre.tolist(), "inertia": inertia.tolist()}


def shifted(body, offset):
    """The body described in a parallel frame whose origin sits at −offset from this one."""
    return {"mass": body["mass"], "centre": (np.array(body["centre"]) + offset).tolist(),
            "inertia": body["inertia"]}


# ---------------------------------------------------------------- built-in arm types

SERVO_MASS = 0.055  # every joint's servo in tests/common


def lumped(points, axes, kinds, links, tool_offset, tool_mass):
    """Bodies as the Rust arm model lumps them: each link with the next joint's servo at that
    joint's point, the last with the tool. All frames parallel to the base at zero."""
    bodies = [dict(link) for link in links]
    for i in range(1, len(points)):
        step = np.array(points[i]) - np.array(points[i - 1])
        bodies[i - 1] = combined(bodies[i - 1], point(SERVO_MASS, step))
    bodies[-1] = combined(bodies[-1], shifted(tool_mass, np.array(tool_offset)))
    return [
        {"kind": k, "axis": list(a), "point": list(p), "body": b}
        for k, a, p, b in zip(kinds, axes, points, bodies)
    ]


def translation(x, y, z):
    return [[1.0, 0.0, 0.0, x], [0.0, 1.0, 0.0, y], [0.0, 0.0, 1.0, z], [0.0, 0.0, 0.0, 1.0]]


def scara():
    base, upper, fore, drop = 0.12, 0.15, 0.12, 0.04
    points = [[0.0, 0.0, base], [upper, 0.0, base], [upper + fore, 0.0, base],
              [upper + fore, 0.0, base]]
    z = [0.0, 0.0, 1.0]
    links = [rod_along_x(0.08, upper), rod_along_x(0.06, fore), point(0.03, [0, 0, 0]),
             point(0.02, [0, 0, 0])]
    joints = lumped(points, [z] * 4, ["revolute", "revolute", "prismatic", "revolute"], links,
                    [0.0, 0.0, -drop], point(0.04, [0.0, 0.0, 0.0]))
    limits = [(-2.4, 2.4), (-2.6, 2.6), (-0.05, 0.05), (-math.pi, math.pi)]
    return "scara", joints, translation(upper + fore, 0.0, base - drop), 0.02, limits


def articulated(with_roll):
    base, upper, fore, wrist = 0.09, 0.12, 0.11, 0.07
    points = [[0.0, 0.0, 0.0], [0.0, 0.0, base], [upper, 0.0, base], [upper + fore, 0.0, base]]
    axes = [[0.0, 0.0, 1.0], [0.0, -1.0, 0.0], [0.0, -1.0, 0.0], [0.0, -1.0, 0.0]]
    links = [point(0.03, [0, 0, 0]), rod_along_x(0.05, upper), rod_along_x(0.04, fore),
             rod_along_x(0.02, 0.05)]
    limits = [(-math.pi / 2, math.pi / 2), (-0.2, math.pi - 0.2), (-2.5, 2.5),
              (-math.pi / 2, math.pi / 2)]
    if with_roll:
        points.append([upper + fore, 0.0, base])
        axes.append([1.0, 0.0, 0.0])
        links.append(point(0.01, [0, 0, 0]))
        limits.append((-math.pi / 2, math.pi / 2))
    joints = lumped(points, axes, ["revolute"] * len(points), links, [wrist, 0.0, 0.0],
                    point(0.03, [0.0, 0.0, 0.0]))
    name = "articulated5" if with_roll else "articulated4"
    return name, joints, translation(upper + fore + wrist, 0.0, base), 0.025, limits


# ---------------------------------------------------------------- random chains

def random_chain(rng, index):
    def uniform(low, high):
        return round(low + (high - low) * rng.random(), 6)

    count = 1 + index % 8
    joints, limits = [], []
    position = [0.0, 0.0, 0.0]
    for _ in range(count):
        kind = "prismatic" if rng.random() < 0.2 else "revolute"
        while True:
            axis = [uniform(-1.0, 1.0) for _ in range(3)]
            norm = math.sqrt(sum(a * a for a in axis))
            if norm > 0.1:
                break
        axis = [a / norm for a in axis]
        position = [position[0] + uniform(-0.1, 0.1), position[1] + uniform(-0.1, 0.1),
                    position[2] + uniform(0.0, 0.1)]
        spread = [[uniform(-0.03, 0.03) for _ in range(3)] for _ in range(3)]
        a = np.array(spread)
        inertia = (a @ a.T + np.eye(3) * uniform(1e-5, 1e-4)).tolist()
        body = {"mass": uniform(0.01, 0.25),
                "centre": [uniform(-0.06, 0.06) for _ in range(3)],
                "inertia": [[round(v, 12) for v in row] for row in inertia]}
        # Keep the tensor exactly symmetric after rounding.
        for r in range(3):
            for c in range(r):
                body["inertia"][r][c] = body["inertia"][c][r]
        joints.append({"kind": kind, "axis": axis, "point": list(position), "body": body})
        limits.append((-0.05, 0.05) if kind == "prismatic" else (-0.9 * math.pi, 0.9 * math.pi))
    turn = np.array([uniform(-1.0, 1.0) for _ in range(3)])
    rotation = mr.MatrixExp3(mr.VecToso3(turn))
    tool = mr.RpToTrans(rotation, np.array(position) + np.array([uniform(0.0, 0.08), 0.0,
                                                                  uniform(-0.03, 0.03)]))
    payload = uniform(0.0, 0.1)
    return "chain_%02d" % index, joints, np.array(tool).tolist(), payload, limits


# ---------------------------------------------------------------- the reference itself

def screw_axes(joints):
    columns = []
    for joint in joints:
        axis, q = np.array(joint["axis"]), np.array(joint["point"])
        if joint["kind"] == "revolute":
            columns.append(np.r_[axis, -np.cross(axis, q)])
        else:
            columns.append(np.r_[np.zeros(3), axis])
    return np.array(columns).T


def link_frames(joints, tool, payload):
    """Mlist and Glist: link frames at each body's centre of mass (axes parallel to the base
    at zero), the payload folded into the last body, and the tool frame last."""
    bodies = [joint["body"] for joint in joints]
    last_point = np.array(joints[-1]["point"])
    tool_point = np.array(tool)[:3, 3]
    bodies[-1] = combined(bodies[-1], point(payload, tool_point - last_point))
    homes = []
    glist = []
    for joint, body in zip(joints, bodies):
        centre = np.array(joint["point"]) + np.array(body["centre"])
        homes.append(mr.RpToTrans(np.eye(3), centre))
        g = np.zeros((6, 6))
        g[:3, :3] = np.array(body["inertia"])
        g[3:, 3:] = np.eye(3) * body["mass"]
        glist.append(g)
    homes.append(np.array(tool))
    mlist = []
    previous = np.eye(4)
    for home in homes:
        mlist.append(np.dot(mr.TransInv(previous), home))
        previous = home
    return mlist, glist


def states(rng, joints, tool, payload, limits):
    slist = screw_axes(joints)
    mlist, glist = link_frames(joints, tool, payload)
    g = np.array([0.0, 0.0, -GRAVITY])
    out = []
    for _ in range(STATES_PER_ARM):
        q = [low + (high - low) * rng.random() for low, high in limits]
        qd = [-2.0 + 4.0 * rng.random() for _ in joints]
        qdd = [-5.0 + 10.0 * rng.random() for _ in joints]
        pose = mr.FKinSpace(np.array(tool), slist, np.array(q))
        jacobian = mr.JacobianSpace(slist, np.array(q))
        gravity = mr.GravityForces(np.array(q), g, mlist, glist, slist)
        dynamics = mr.InverseDynamics(np.array(q), np.array(qd), np.array(qdd), g, np.zeros(6),
                                      mlist, glist, slist)
        out.append({
            "q": q,
            "qd": qd,
            "qdd": qdd,
            "tool_pose": floats(pose),
            "space_jacobian": floats(jacobian),
            "gravity_torques": floats(gravity),
            "inverse_dynamics": floats(dynamics),
        })
    return out


def floats(array):
    return [floats(row) for row in array] if np.ndim(array) > 0 else float(array)


def arm_record(rng, name, joints, tool, payload, limits):
    return {
        "name": name,
        "joints": joints,
        "tool_home": tool,
        "payload": payload,
        "limits": [list(pair) for pair in limits],
        "states": states(rng, joints, tool, payload, limits),
    }


def write(path, arms):
    """One arm description per block, one state per line; floats as repr."""
    lines = ["{",
             '  "source": "PyPI modern_robotics (Lynch & Park, Modern Robotics, 2017)",',
             '  "gravity": %s,' % json.dumps(GRAVITY),
             '  "arms": [']
    for a, arm in enumerate(arms):
        lines.append("    {")
        for key in ("name", "joints", "tool_home", "payload", "limits"):
            lines.append('      "%s": %s,' % (key, json.dumps(arm[key])))
        lines.append('      "states": [')
        for s, state in enumerate(arm["states"]):
            comma = "," if s + 1 < len(arm["states"]) else ""
            lines.append("        " + json.dumps(state) + comma)
        lines.append("      ]")
        lines.append("    }" + ("," if a + 1 < len(arms) else ""))
    lines.append("  ]")
    lines.append("}")
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        f.write("\n".join(lines) + "\n")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=os.path.join(HERE, "fixtures"),
                        help="folder for the JSON fixtures (default: tests/reference/fixtures)")
    args = parser.parse_args()
    os.makedirs(args.out, exist_ok=True)
    rng = random.Random(SEED)
    builtin = [scara(), articulated(False), articulated(True)]
    write(os.path.join(args.out, "builtin_arms.json"),
          [arm_record(rng, *arm) for arm in builtin])
    chains = [random_chain(rng, index) for index in range(RANDOM_CHAINS)]
    write(os.path.join(args.out, "random_chains.json"),
          [arm_record(rng, *chain) for chain in chains])


if __name__ == "__main__":
    main()
