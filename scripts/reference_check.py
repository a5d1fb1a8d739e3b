#!/usr/bin/env python3
"""Independent high-precision check of `burnout solve` against mpmath.

Derived here from first principles, at 50 digits, without the product's
formulas: the target conic from its pair, the burnout speed from vis-viva,
the flight-path angle from atan2(v_r, v_t) with v_t = sqrt(mu p)/r and
v_r^2 = v^2 - v_t^2, the true anomaly from the conic equation. Random cases
over every catalog body, in mixed units, elliptic, near-circular, near-apsis
and hyperbolic; each output must agree to 1e-9 relative. Inputs are taken
as the doubles the tool reads. Angles near an apsis are allowed 16 rounding
units of the apsis distance on top (the problem's own conditioning), or
1e-12 deg absolute.

    python3 scripts/reference_check.py BIN [N_CASES] [SEED]

Exits 1 on any disagreement, printing the command line that shows it.
"""
import json
import random
import subprocess
import sys

import mpmath as mp

mp.mp.dps = 50
UNITS = {"m": 1, "km": 1000, "nmi": 1852, "ft": mp.mpf("0.3048")}


def length(rng, metres):
    """`metres` written in a random length unit, with enough digits."""
    unit = rng.choice(list(UNITS))
    value = mp.mpf(metres) / UNITS[unit]
    text = mp.nstr(value, 17, strip_zeros=False)
    # The tool reads the text into the nearest double, then scales it.
    return f"{text}{unit}", mp.mpf(float(text)) * UNITS[unit]


def reference(mu, r, rp, e):
    """Speed, fpa (deg), true anomaly (deg) of the ascending state."""
    p = rp * (1 + e)
    inv_a = (1 - e) / rp
    v2 = mu * (2 / r - inv_a)
    vt = mp.sqrt(mu * p) / r
    vr = mp.sqrt(max(v2 - vt * vt, 0))
    fpa = mp.degrees(mp.atan2(vr, vt))
    nu = mp.degrees(mp.atan2(vr * mp.sqrt(mu * p) / mu, p / r - 1)) if e > 0 else mp.mpf(0)
    return mp.sqrt(v2), fpa, nu


def close(got, want, rel, abs_tol=0):
    return abs(mp.mpf(got) - want) <= max(rel * abs(want), abs_tol)


def main():
    binary = sys.argv[1]
    n = int(sys.argv[2]) if len(sys.argv) > 2 else 300
    rng = random.Random(int(sys.argv[3]) if len(sys.argv) > 3 else 20261202)
    bodies = ["earth", "moon", "mars", "venus", "mercury", "jupiter", "sun"]
    failures = 0
    for _ in range(n):
        body = rng.choice(bodies)
        info = json.loads(subprocess.run(
            [binary, "solve", "--body", body, "--burnout-alt", "0", "--speed", "1", "--fpa", "0",
             "--format", "json"], capture_output=True, text=True, check=True).stdout)["body"]
        mu, re = mp.mpf(info["mu_m3_s2"]), mp.mpf(info["radius_m"])
        kind = rng.choice(["ellipse", "near-circular", "near-apsis", "hyperbola"])
        rp_m = re * (1 + mp.mpf(rng.uniform(0.01, 3)))
        if kind == "hyperbola":
            e = mp.mpf(rng.uniform(1.01, 4))
            r_m = rp_m * (1 + mp.mpf(rng.uniform(0.0, 3)))
        else:
            e = mp.mpf(10) ** rng.uniform(-9, -6) if kind == "near-circular" else mp.mpf(rng.uniform(0.01, 0.9))
            ra_m = rp_m * (1 + e) / (1 - e)
            u = 1 - mp.mpf(10) ** rng.uniform(-9, -5) if kind == "near-apsis" else mp.mpf(rng.uniform(0.01, 0.99))
            r_m = rp_m + u * (ra_m - rp_m)
        rp_text, rp_m = length(rng, rp_m)
        r_text, r_m = length(rng, r_m)
        e_text = mp.nstr(e, 17)
        e = mp.mpf(float(e_text))
        if r_m < rp_m or (e < 1 and r_m > rp_m * (1 + e) / (1 - e)):
            continue
        args = [binary, "solve", "--body", body, "--burnout-radius", r_text,
                "--periapsis-radius", rp_text, "--ecc", e_text, "--format", "json"]
        doc = json.loads(subprocess.run(args, capture_output=True, text=True, check=True).stdout)
        v, fpa, nu = reference(mu, r_m, rp_m, e)
        sol = doc["solutions"][0]
        # Near an apsis the angle follows sqrt(r - rp) or sqrt(ra - r): a
        # rounding unit in a derived apsis moves it by about
        # 1e-16 * apsis / distance. Allow 16 such units on top of 1e-9.
        dist = [r_m - rp_m]
        if e < 1:
            dist.append(rp_m * (1 + e) / (1 - e) - r_m)
        floor = max(mp.mpf("1e-16") * r_m / max(d, mp.mpf("1e-300")) for d in dist)
        angle_tol = max(mp.mpf("1e-9"), 16 * floor)
        checks = [
            ("speed_m_s", close(sol["speed_m_s"], v, 1e-9)),
            ("flight_path_angle_deg", close(sol["flight_path_angle_deg"], fpa, angle_tol, 1e-12)),
            ("periapsis_radius_m", close(doc["orbit"]["periapsis_radius_m"], rp_m, 1e-9)),
        ]
        if kind in ("ellipse", "hyperbola"):
            checks.append(("true_anomaly_deg", close(sol["true_anomaly_deg"], nu, angle_tol, 1e-12)))
        if e < 1:
            checks.append(("apoapsis_radius_m",
                           close(doc["orbit"]["apoapsis_radius_m"], rp_m * (1 + e) / (1 - e), 1e-9)))
        else:
            checks.append(("c3_m2_s2", close(doc["orbit"]["c3_m2_s2"], -mu * (1 - e) / rp_m, 1e-9)))
        for name, ok in checks:
            if not ok:
                failures += 1
                print(f"MISMATCH {name}: {' '.join(args[1:])}")
    print(f"reference check: {n} cases, {failures} mismatches")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
