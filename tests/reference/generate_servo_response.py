"""Reference runs of Armwright's dry-run servo model, integrated by SciPy.

The equations are those documented in crates/trajectory/src/servo_sim.rs: per joint, the
position loop turns the pulse-width error (beyond half the deadband, across the proportional
band, saturating at full drive) into motor effort less the back-EMF braking of a DC motor
(so full drive gives zero effort at the no-load speed); gear damping makes up the damping ratio
where back-EMF damping gives less; dry friction is smoothed below a speed; gravity asks a holding effort. The pulse is
held for a whole frame; the load is refreshed at each frame start from the link position; the
link follows the servo output through a backlash play.

SciPy's adaptive `solve_ivp` (Virtanen et al., SciPy 1.0, Nature Methods 2020) integrates each
frame with tight tolerances; the Rust simulator uses fixed-step RK4. The fixture keeps the
per-frame commands, so both sides hold exactly the same pulses.

Run: .venv/bin/python tests/reference/generate_servo_response.py [--out DIR]
(writes DIR/servo_response.json; DIR defaults to tests/reference/fixtures)
"""

import argparse
import json
import math
import pathlib

from scipy.integrate import solve_ivp

FIXTURES = pathlib.Path(__file__).with_name("fixtures")
STEP = 0.001
FRAME = 0.02
SETTLE = 0.5
DURATION = 2.0


def round_half_away(x):
    return math.floor(abs(x) + 0.5) * (1 if x >= 0 else -1)


class Model:
    def __init__(self, p):
        self.__dict__.update(p)
        self.slope = (self.pulse_b_us - self.pulse_a_us) / (self.position_b - self.position_a)

    def pulse_at(self, position):
        return self.pulse_a_us + (position - self.position_a) * self.slope

    def commanded_pulse(self, position):
        # The pulse rule (armwright_kinematics::sent_pulse): limit to the range, then round to
        # the nearest whole unit that lies inside it.
        unit = self.pulse_resolution_us
        limited = min(max(self.pulse_at(position), self.pulse_min_us), self.pulse_max_us)
        first = math.ceil(self.pulse_min_us / unit - 1e-9)
        last = math.floor(self.pulse_max_us / unit + 1e-9)
        steps = round_half_away(limited / unit)
        if first <= last:
            steps = min(max(steps, first), last)
        return steps * unit

    def drive(self, pulse, position):
        error = (pulse - self.pulse_at(position)) * math.copysign(1.0, self.slope)
        beyond = max(abs(error) - self.deadband_us / 2.0, 0.0)
        return min(beyond / self.proportional_band_us, 1.0) * (math.copysign(1.0, error) if error != 0 else 0.0)

    def accel(self, pulse, load_inertia, holding, position, velocity):
        inertia = self.motor_inertia + load_inertia
        d = self.drive(pulse, position)
        motor = self.stall_effort * (d - velocity / self.no_load_speed)
        stiffness = self.stall_effort * abs(self.slope) / self.proportional_band_us
        wanted = 2.0 * self.damping_ratio * math.sqrt(stiffness * inertia)
        viscous = max(wanted - self.stall_effort / self.no_load_speed, 0.0)
        dry = self.dry_friction * velocity / math.sqrt(velocity * velocity + self.friction_smoothing ** 2)
        return (motor - viscous * velocity - dry - holding) / inertia


def run(case):
    m = Model(case["model"])
    inertia = case["load_inertia"]
    gravity = case["gravity_effort"]  # holding effort = gravity_effort * cos(link position)
    frames = case["frame_commands"]
    pulse = m.commanded_pulse(frames[0])
    position = m.position_a + (pulse - m.pulse_a_us) / m.slope
    velocity = 0.0
    link = position
    half = m.backlash / 2.0
    steps_per_frame = round(FRAME / STEP)

    def integrate_frame(pulse, holding, position, velocity, link, steps):
        """Integrates one frame; returns samples (after each step) of position, velocity, link."""
        t_eval = [STEP * (k + 1) for k in range(steps)]
        sol = solve_ivp(
            lambda t, y: [y[1], m.accel(pulse, inertia, holding, y[0], y[1])],
            (0.0, STEP * steps),
            [position, velocity],
            method="DOP853",
            t_eval=t_eval,
            rtol=1e-12,
            atol=1e-14,
            max_step=STEP / 4,
        )
        out = []
        for p, v in zip(sol.y[0], sol.y[1]):
            link = min(max(link, p - half), p + half)
            out.append((p, v, link))
        return out

    # Settle at the first command, frame by frame.
    settle_frames = round(SETTLE / FRAME)
    for _ in range(settle_frames):
        holding = gravity * math.cos(link)
        out = integrate_frame(pulse, holding, position, velocity, link, steps_per_frame)
        position, velocity, link = out[-1]

    samples = round(DURATION / STEP) + 1
    actual = [link]
    frame_count = (samples - 1) // steps_per_frame
    for f in range(frame_count):
        pulse = m.commanded_pulse(frames[f])
        holding = gravity * math.cos(link)
        out = integrate_frame(pulse, holding, position, velocity, link, steps_per_frame)
        actual.extend(o[2] for o in out)
        position, velocity, link = out[-1]
    return actual


def ramp(start, end, move_time, frames):
    out = []
    for f in range(frames):
        t = f * FRAME
        s = min(t / move_time, 1.0)
        out.append(start + (end - start) * (1 - math.cos(math.pi * s)) / 2)
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=pathlib.Path, default=FIXTURES)
    out = parser.parse_args().out
    out.mkdir(parents=True, exist_ok=True)
    frames = round(DURATION / FRAME) + 1
    base = dict(
        position_a=-math.pi / 2, pulse_a_us=1000.0, position_b=math.pi / 2, pulse_b_us=2000.0,
        pulse_min_us=900.0, pulse_max_us=2100.0, pulse_resolution_us=1.0,
        deadband_us=4.0, proportional_band_us=40.0, damping_ratio=0.3,
        friction_smoothing=0.02,
    )
    cases = []
    # A shoulder: strong servo, heavy load, gravity, some backlash.
    shoulder = dict(base, stall_effort=1.96, no_load_speed=6.16, backlash=math.radians(0.5))
    shoulder.update(motor_inertia=0.01 * 1.96 / 6.16, dry_friction=0.02 * 1.96)
    cases.append(dict(name="shoulder lifting a load", model=shoulder, load_inertia=4e-3,
                      gravity_effort=0.35, frame_commands=ramp(0.0, math.radians(60), 0.6, frames)))
    # A wrist: micro servo, falling calibration, large backlash, fast move that saturates.
    wrist = dict(base, stall_effort=0.18, no_load_speed=10.5, backlash=math.radians(2.0),
                 pulse_a_us=2000.0, pulse_b_us=1000.0, deadband_us=6.0)
    wrist.update(motor_inertia=0.01 * 0.18 / 10.5, dry_friction=0.02 * 0.18)
    cases.append(dict(name="micro wrist, reversed, fast", model=wrist, load_inertia=2e-4,
                      gravity_effort=0.02, frame_commands=ramp(math.radians(20), math.radians(-45), 0.25, frames)))
    # An elbow with a light damping ratio that rings.
    elbow = dict(base, stall_effort=0.9, no_load_speed=7.0, backlash=0.0, damping_ratio=0.1)
    elbow.update(motor_inertia=0.01 * 0.9 / 7.0, dry_friction=0.01 * 0.9)
    cases.append(dict(name="lightly damped elbow", model=elbow, load_inertia=2e-3,
                      gravity_effort=0.0, frame_commands=ramp(0.0, math.radians(-30), 0.3, frames)))
    for case in cases:
        case["actual"] = run(case)
    doc = dict(
        source="scipy.integrate.solve_ivp (DOP853, rtol 1e-12) on the equations of servo_sim.rs",
        step=STEP, frame_period=FRAME, settle_before=SETTLE, duration=DURATION, cases=cases,
    )
    (out / "servo_response.json").write_text(json.dumps(doc, indent=1) + "\n")


if __name__ == "__main__":
    main()
