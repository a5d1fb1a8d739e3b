#!/usr/bin/env python3
"""Independent 50-digit reference for the coast-time targets of `burnout solve`.

    python3 scripts/coast_reference.py BIN [N_CASES] [SEED] [--verbose] [--report-ill-conditioned]

By default every disagreement fails, ill-conditioned roots included.
--report-ill-conditioned (used by CI) prints a case whose only
disagreements concern ill-conditioned reference roots (conditioning floor
above 1e-9: the root cannot be pinned to 1e-9 in double precision) as ILL
and counts it in the closing line, without failing the run; a miss of any
well-conditioned root, any stray root or any bad exit still fails.

Two-body point-mass model, derived here from first principles with mpmath
(no formula is taken from the product). For a burnout state (r, v, fpa) with
q = r v^2 / mu and x = r / a = 2 - q:

* ellipse (x > 0): e cos E = 1 - x, e sin E = S = sin(fpa) sqrt(q x); the
  mean anomaly is M = E - S and the time since periapsis t_s = M sqrt(r^3/mu)
  / x^1.5 in (-P/2, P/2]. Time to periapsis = (-t_s) mod P, time to
  apoapsis = P/2 - t_s, both in [0, P).
* hyperbola (x < 0): e cosh F = 1 - x, e sinh F = sin(fpa) sqrt(-q x),
  t_s = (S - F) sqrt(r^3/mu) / (-x)^1.5; time to periapsis = -t_s only when
  descending (t_s < 0); never a time to apoapsis.
* parabola (x = 0): t_s = (1/2) sqrt(p^3/mu) (D + D^3/3), D = tan(fpa).
* true anomaly nu = atan2(q sin cos, q cos^2 - 1), angle to apoapsis =
  180 deg - nu (mod 360), closed orbits only.

Every evaluation runs with guard digits added for the cancellations that
the formulas have near escape (x -> 0) and near circular speed (q -> 1), so
the function is evaluated accurately at the exact (double) inputs. A
self-test cross-checks the times against direct quadrature of
dt = r^2/h dnu (mp.quad) on elliptic, near-parabolic, hyperbolic and
near-circular states before any case runs.

Problem types (flags as the tool names them): A radius+fpa+time (speed
free), B radius+speed+time (fpa free), C radius+element+time (speed and fpa
free; also radius+angle-to-apoapsis+time), D speed+fpa+time (radius free);
A, B, D also take --angle-to-apoapsis as the single target. Each case is
built from a random true state, so a root exists; inputs are written with 17
significant digits in random units and the doubles the tool will read are
the exact inputs of the reference.

Completeness of the reference roots. Each problem is reduced to a 1-D
residual F(u) on a few open intervals ("pieces"): the pieces are cut at the
only places where a coast time is discontinuous (burnout at an apsis,
fpa = 0, where the time wraps by a period) and at the ends of the physical
domain; F is analytic inside a piece. The variable u is one in which the
family is a smooth curve (speed, fpa, radius, true anomaly on the element
family, eccentricity on the fixed-angle family), and the grid is a union of
uniform points with geometric clusters (10^-k offsets, down to ~1e-16
relative or 1e-18 in 1 - v/v_esc) at every end of a piece, at the escape
and the circular speed/radius, and (fpa free) points uniform in the
eccentric anomaly, so all scales at which the function can change
(near-parabolic, near-circular, near-vertical, tiny fpa) carry dozens of
samples. F is
monotone in the limit at every end of a piece (time -> infinity as the
orbit opens, or -> a finite apsis limit linearly), so no root hides beyond
the outermost samples. The grid is then refined adaptively: an interval is
bisected while its midpoint departs from the chord by more than half of
min(|F|) at its ends, which is what a hidden pair of crossings needs. Every
sign change is refined by a safeguarded Illinois iteration to 45 digits and
rejected if |F| does not vanish there (a wrap, not a root), and every local
minimum of |F| without a sign change is minimised by golden section: if F
changes sign there both roots are refined, if it reaches zero it is a double
root, and if it only comes within the double-precision noise of the problem
it is recorded as an optional near-root. Roots are merged only when they agree
to 1e-12 relative.

Matching. Every reference root must be returned within 1e-9 relative on
speed, radius and fpa, or within 4x the problem's own conditioning floor:
the change of the root when every input (radius, speed, fpa, element, target,
mu) moves by 1e-15 relative (about 5 rounding units), i.e. sum |d out/d p_i|
|p_i| 1e-15, with the root displacement min(dF/|F'|, sqrt(2 dF/|F''|)) so
that near-double roots get their square-root sensitivity. Roots whose floor
exceeds 1e-9 are reported as 'ill-conditioned'. A tool root matching no
reference root is 'extra'; a tool exit 3 with reference roots misses all of
them. Each tool root is also fed back into the model: the target (and for C
the element) must be met to 1e-9 relative or the same conditioning floor.

Ill-conditioned roots (floor above 1e-9) get only the looser allowance of
4x their floor; missing one, or returning it outside that allowance, still
fails. Only roots that exist inside the double-precision noise of the
residual (a pair whose residual between them stays within 10x the noise, or
a near-touch of zero within the noise) are optional: reported, never required,
and a tool root on them is not 'extra'. A free burnout radius (type D) is
searched over the whole physical domain; roots beyond FREE_RADIUS_MAX body
radii (the tool's documented search range) are reported as optional
'beyond documented range' roots.

The surface. A root whose path meets the body's surface before the apsis
its target aims at (apoapsis for time and angle to apoapsis, periapsis for
time to periapsis) is no solution for that target: the tool must not return
it, and when every root is of that kind it must exit 3 saying that every
solution meets the surface first. Derived here from the conic equation
r(nu) = p / (1 + e cos nu), whose radius grows with nu on (0, 180) deg and
falls on (180, 360) deg: after burnout nu grows, so on the way to periapsis
the radius falls (after climbing over apoapsis when ascending) to rp and
passes the surface radius R on the way iff rp < R; on the way to apoapsis an
ascending burnout (fpa > 0) only climbs from r >= R and never meets it, and
a descending one first falls to periapsis, meeting it iff rp < R. Roots with
rp within 1e-9 relative of R are optional (the verdict is a matter of
rounding).

Exits 1 on any disagreement, printing the command line and why.
"""
import json
import math
import os
import random
import shlex
import subprocess
import sys
from concurrent.futures import ProcessPoolExecutor

import mpmath as mp

mp.mp.dps = 50
BASE_DPS = 50
SAMPLE_DPS = 26
K_ULP = mp.mpf("1e-15")
REL = mp.mpf("1e-9")
# The tool documents a search for a free burnout radius up to 1e4 body radii
# (README, "Free burnout quantities"): roots beyond are optional.
FREE_RADIUS_MAX = 10000
FLOOR_FACTOR = 4
BODIES = ["earth", "moon", "mars", "venus", "mercury", "jupiter", "sun"]
REGIMES = ["elliptic", "near-parabolic-ellipse", "near-parabolic-hyperbola", "near-circular",
           "long-coast", "flat-fpa", "steep-fpa"]
LEN_UNITS = {"m": 1, "km": 1000, "nmi": 1852, "ft": mp.mpf("0.3048")}
SPEED_UNITS = {"m/s": 1, "km/s": 1000, "ft/s": mp.mpf("0.3048")}
TIME_UNITS = {"s": 1, "min": 60, "h": 3600, "d": 86400}


# --------------------------------------------------------------------------
# two-body model
# --------------------------------------------------------------------------

def _guard(q, x, cg):
    """Extra digits for the cancellations in x = 2 - q, q - 1, q cos^2 - 1."""
    worst = 0.0
    for val in (x, q - 1, q * cg * cg - 1):
        fv = abs(float(val))
        worst = max(worst, 60.0 if fv == 0 else -math.log10(fv) if fv < 1 else 0.0)
    return int(min(worst, 70.0)) + 12


def coast(mu, r, v, g):
    """Coast quantities of the burnout state (r m, v m/s, fpa g rad).

    Returns dict with x (= r/a), e, nu (deg, in (-180, 180]), period (None
    when open), t_peri, t_apo, angle_apo (deg) -- None where undefined.
    """
    dps = mp.mp.dps
    q0 = r * v * v / mu
    with mp.workdps(dps + _guard(q0, 2 - q0, mp.cos(g))):
        sg, cg = mp.sin(g), mp.cos(g)
        q = r * v * v / mu
        x = 2 - q
        tau = mp.sqrt(r ** 3 / mu)
        ecos_nu = q * cg * cg - 1
        esin_nu = q * sg * cg
        e = mp.sqrt(ecos_nu ** 2 + esin_nu ** 2)
        nu = mp.degrees(mp.atan2(esin_nu, ecos_nu))
        out = {"x": x, "e": e, "nu": nu, "period": None, "t_peri": None, "t_apo": None,
               "angle_apo": None}
        if x > 0:
            s = sg * mp.sqrt(q * x)
            big_e = mp.atan2(s, 1 - x)
            period = 2 * mp.pi * tau / x ** mp.mpf(1.5)
            ts = (big_e - s) * tau / x ** mp.mpf(1.5)
            out["period"] = period
            out["t_peri"] = -ts if ts <= 0 else period - ts
            out["t_apo"] = period / 2 - ts
            out["angle_apo"] = 180 - nu
        elif x < 0:
            s = sg * mp.sqrt(-q * x)
            ecc = mp.sqrt((1 - x) ** 2 - s * s)
            big_f = mp.asinh(s / ecc)
            ts = (s - big_f) * tau / (-x) ** mp.mpf(1.5)
            out["t_peri"] = -ts if ts <= 0 else None
        else:
            p = r * q * cg * cg
            d = mp.tan(g)
            ts = mp.sqrt(p ** 3 / mu) / 2 * (d + d ** 3 / 3)
            out["t_peri"] = -ts if ts <= 0 else None
    return {k: (+val if val is not None else None) for k, val in out.items()}


def elements(mu, r, v, g):
    """Periapsis radius, apoapsis radius (None if open), sma, ecc."""
    with mp.workdps(mp.mp.dps + 20):
        q = r * v * v / mu
        cg = mp.cos(g)
        c = coast(mu, r, v, g)
        e = c["e"]
        p = r * q * cg * cg
        rp = p / (1 + e)
        ra = p / (1 - e) if e < 1 else None
        sma = r / (2 - q) if q != 2 else mp.inf
        return {"periapsis_radius": +rp, "apoapsis_radius": +ra if ra is not None else None,
                "sma": +sma, "ecc": +e}


def quad_time(mu, r, v, g, to):
    """Independent time by quadrature of dt = r^2/h dnu ('peri' or 'apo')."""
    c = coast(mu, r, v, g)
    h = r * v * mp.cos(g)
    p = h * h / mu
    e = c["e"]
    nu0 = mp.radians(c["nu"])
    if to == "peri":
        nu1 = 2 * mp.pi if nu0 > 0 else mp.mpf(0)
    else:
        nu1 = mp.pi if nu0 <= mp.pi else 3 * mp.pi
    f = lambda nu: (p / (1 + e * mp.cos(nu))) ** 2 / h
    # split geometrically on both sides of apoapsis (where the integrand
    # peaks for near-parabolic orbits) and towards the end point
    pts = {nu0, nu1}
    for k in range(1, 60):
        step = mp.mpf(2) ** (-k / mp.mpf(2))
        for c in (mp.pi, nu1):
            for cand in (c - step, c + step):
                if nu0 < cand < nu1:
                    pts.add(cand)
    if nu0 < mp.pi < nu1:
        pts.add(mp.pi)
    return mp.quad(f, sorted(pts))


def self_test():
    mu = mp.mpf(398600441800000.0)
    r = mp.mpf(6678137.0)
    vesc = mp.sqrt(2 * mu / r)
    vc = vesc / mp.sqrt(2)
    cases = [(vc * mp.mpf("1.05"), mp.radians(3), "apo"), (vc * mp.mpf("1.05"), mp.radians(-3), "peri"),
             (vc * mp.mpf("0.93"), mp.radians(25), "peri"),
             (vesc * (1 - mp.mpf("1e-4")), mp.radians(10), "apo"),
             (vesc * (1 - mp.mpf("1e-5")), mp.radians(-10), "peri"),
             (vesc * (1 + mp.mpf("1e-6")), mp.radians(-20), "peri"),
             (vesc * mp.mpf("1.7"), mp.radians(-40), "peri"),
             (vc * (1 + mp.mpf("1e-6")), mp.radians(mp.mpf("1e-5")), "apo")]
    with mp.workdps(40):
        for v, g, to in cases:
            c = coast(mu, r, v, g)
            want = c["t_peri"] if to == "peri" else c["t_apo"]
            got = quad_time(mu, r, v, g, to)
            if abs(got - want) > mp.mpf("1e-25") * want:
                print(f"SELF-TEST FAILED: v={mp.nstr(v, 20)} fpa={mp.nstr(mp.degrees(g), 10)} {to}: "
                      f"closed form {mp.nstr(want, 30)} vs quadrature {mp.nstr(got, 30)}")
                return False
        # continuity through the parabola (descending time to periapsis)
        g = mp.radians(-15)
        ts = [coast(mu, r, vesc * (1 + d), g)["t_peri"] for d in (mp.mpf("-1e-30"), 0, mp.mpf("1e-30"))]
        if max(ts) - min(ts) > mp.mpf("1e-20") * ts[1]:
            print("SELF-TEST FAILED: time to periapsis not continuous through escape speed")
            return False
    return True


# --------------------------------------------------------------------------
# problems: 1-D families u -> burnout state
# --------------------------------------------------------------------------

def target_value(kind, c):
    return c[{"time-to-apoapsis": "t_apo", "time-to-periapsis": "t_peri",
              "angle-to-apoapsis": "angle_apo"}[kind]]


def meets_surface_first(P, kind, out_vals):
    """True when the root's path meets the surface before the apsis the
    target aims at, None when that is a matter of rounding (rp within 1e-9
    relative of R), else False (see the module docstring)."""
    r, v, fpa_deg = out_vals
    rp = elements(P["mu"], r, v, mp.radians(fpa_deg))["periapsis_radius"]
    R = P["R"]
    if abs(rp - R) <= REL * R:
        return None
    if rp > R:
        return False
    return kind == "time-to-periapsis" or fpa_deg < 0


def geom(center, direction, lo_exp, hi_exp, n):
    """center + direction * 10^k for k from lo_exp to hi_exp."""
    out = []
    for i in range(n):
        k = mp.mpf(lo_exp) + (mp.mpf(hi_exp) - lo_exp) * i / (n - 1)
        out.append(center + direction * mp.power(10, k))
    return out


def lin(lo, hi, n):
    return [lo + (hi - lo) * (i + mp.mpf(1) / 2) / n for i in range(n)]


class Problem:
    """A 1-D family with named parameters P (the tool's inputs, exact)."""

    def __init__(self, ptype, P, kind, element=None):
        self.ptype, self.P, self.kind, self.element = ptype, P, kind, element

    # burnout state (r, v, g rad) of the family member u
    def state(self, u, P=None):
        P = P or self.P
        mu = P["mu"]
        t = self.ptype
        if t == "A":
            return P["r"], u, P["g"]
        if t == "B":
            return P["r"], P["v"], u
        if t == "D":
            return u, P["v"], P["g"]
        if t == "Csma":
            v2 = mu * (2 / P["r"] - 1 / P["elem"])
            return P["r"], mp.sqrt(v2), u
        # true-anomaly (or eccentricity) parametrised element families; the
        # 1 - e and 1 + e cos nu cancellations near e = 1 and nu = 180 deg
        # are absorbed by 40 extra digits
        with mp.workdps(mp.mp.dps + 40):
            r = P["r"]
            if t == "Cecc":
                e, nu = P["elem"], u
                p = r * (1 + e * mp.cos(nu))
            elif t == "Crp":
                rp, nu = P["elem"], u
                e = (r - rp) / (rp - r * mp.cos(nu))
                p = rp * (1 + e)
            elif t == "Cra":
                ra, nu = P["elem"], u
                # 1 - e = r (1 + cos nu) / (ra + r cos nu), 1 + cos nu = 2 cos^2(nu/2)
                one_minus_e = 2 * r * mp.cos(nu / 2) ** 2 / (ra + r * mp.cos(nu))
                e = 1 - one_minus_e
                p = ra * one_minus_e
            elif t == "Cang":
                e, nu = u, mp.radians(180 - P["elem"])
                p = r * (1 + e * mp.cos(nu))
            else:
                raise ValueError(t)
            if p <= 0 or e < 0:
                return None
            vt = mp.sqrt(mu * p) / r
            vr = mp.sqrt(mu / p) * e * mp.sin(nu)
            return r, mp.sqrt(vt * vt + vr * vr), mp.atan2(vr, vt)

    def residual(self, u, P=None):
        P = P or self.P
        st = self.state(u, P)
        if st is None:
            return None
        r, v, g = st
        if r <= 0 or v <= 0:
            return None
        val = target_value(self.kind, coast(P["mu"], r, v, g))
        return None if val is None else val - P["T"]

    def pieces(self):
        """[(grid points, description)] for each continuous piece."""
        P, t, kind = self.P, self.ptype, self.kind
        mu = P["mu"]
        closed_only = kind != "time-to-periapsis"
        out = []
        if t == "A":
            r, g = P["r"], P["g"]
            vesc = mp.sqrt(2 * mu / r)
            sc = 1 / mp.sqrt(2)  # circular speed: the burnout swaps apsis there
            below = (lin(mp.mpf("1e-3"), 1 - mp.mpf("1e-3"), 160) + geom(0, 1, -9, -3, 40)
                     + geom(1, -1, -18, -3, 110) + geom(sc, sc, -17, -1, 50)
                     + geom(sc, -sc, -17, -1, 50))
            above = (geom(1, 1, -18, -3, 110) + geom(1, 1, -3, 5, 80))
            if closed_only or g > 0:
                out.append(([vesc * s for s in below], "speed below escape"))
            else:  # descending time to periapsis: continuous through escape
                out.append(([vesc * s for s in below + [mp.mpf(1)] + above], "speed"))
        elif t == "D":
            v, g, R = P["v"], P["g"], P["R"]
            resc = 2 * mu / (v * v)
            pts = []
            if resc > R:
                span = mp.log10(resc / R)
                pts += [R * mp.power(10, span * s) for s in lin(0, 1, 200)]
                pts += geom(R, R, -15, -2, 30)
                pts += geom(resc, -resc, -18, -2, 110)
                rc = resc / 2  # circular radius for this speed
                pts += geom(rc, rc, -17, -1, 50) + geom(rc, -rc, -17, -1, 50)
                pts = [p for p in pts if R < p < resc]
            if not (closed_only or g > 0):
                hi = max(resc, R)
                pts += [resc] if resc > R else []
                pts += geom(resc, resc, -18, -2, 110)
                pts += [hi * s for s in geom(0, 1, -1, 8, 150)] + geom(R, R, -15, -1, 30)
                pts = [p for p in pts if p > R]
            out.append((pts, "radius"))
        elif t in ("B", "Csma"):
            r = P["r"]
            st = self.state(mp.mpf(0))
            v = st[1]
            q = r * v * v / mu
            x = 2 - q
            half = mp.pi / 2
            for sgn in (1, -1):
                if x <= 0 and (sgn > 0 or closed_only):
                    continue  # open orbit: only the descending time to periapsis exists
                pts = lin(0, half, 200) + geom(0, 1, -22, -1, 90) + geom(half, -1, -14, -1, 40)
                if x > 0 and q != 1:
                    # the scale of fpa where the eccentric anomaly sweeps
                    k, smax = 1 - x, mp.sqrt(q * x)
                    e_lo, e_hi = mp.atan2(0, k), mp.atan2(smax, k)
                    for big_e in lin(e_lo, e_hi, 120):
                        sg = k * mp.tan(big_e) / smax
                        if 0 < sg < 1:
                            pts.append(mp.asin(sg))
                pts = [sgn * p for p in pts if 0 < p < half]
                out.append((pts, "fpa > 0" if sgn > 0 else "fpa < 0"))
        elif t in ("Cecc", "Crp", "Cra"):
            r, el = P["r"], P["elem"]
            special = []
            if t == "Cecc":
                if el < 1:
                    ranges = [(0, mp.pi), (mp.pi, 2 * mp.pi)]
                elif closed_only:
                    ranges = []
                else:
                    ranges = [(2 * mp.pi - mp.acos(-1 / el), 2 * mp.pi)]
            elif t == "Crp":
                if el >= r:
                    ranges = []
                else:
                    n0 = mp.acos(el / r)            # e -> infinity
                    n1 = mp.acos(2 * el / r - 1)    # e = 1
                    if closed_only:
                        ranges = [(n1, mp.pi), (mp.pi, 2 * mp.pi - n1)]
                    else:
                        ranges = [(n1, mp.pi), (mp.pi, 2 * mp.pi - n0)]
                    special = [2 * mp.pi - n1]
            else:
                ranges = [(0, mp.pi), (mp.pi, 2 * mp.pi)] if el > r else []
            for lo, hi in ranges:
                pts = (lin(lo, hi, 240) + geom(lo, 1, -16, -0.5, 45) + geom(hi, -1, -16, -0.5, 45))
                for s in special:
                    if lo < s < hi:
                        pts += geom(s, 1, -16, -1, 40) + geom(s, -1, -16, -1, 40) + [s]
                pts = [p for p in pts if lo < p < hi]
                out.append((pts, f"nu in ({mp.nstr(mp.degrees(lo), 6)}, {mp.nstr(mp.degrees(hi), 6)}) deg"))
        elif t == "Cang":
            pts = lin(0, 1, 200) + geom(0, 1, -16, -1, 60) + geom(1, -1, -16, -1, 60)
            out.append(([p for p in pts if 0 < p < 1], "ecc in (0, 1)"))
        return out

    def output(self, u, P=None):
        st = self.state(u, P)
        r, v, g = st
        return [r, v, mp.degrees(g)]


# --------------------------------------------------------------------------
# root finding
# --------------------------------------------------------------------------

def sgn(a):
    return 1 if a > 0 else (-1 if a < 0 else 0)


def illinois(F, a, b, fa, fb, width):
    """Safeguarded Illinois iteration on a sign-changing bracket."""
    side = 0
    for _ in range(400):
        if abs(b - a) <= width * max(abs(a), abs(b)) or fa == 0 or fb == 0:
            break
        old = abs(b - a)
        c = b - fb * (b - a) / (fb - fa)
        if not (min(a, b) < c < max(a, b)):
            c = (a + b) / 2
        fc = F(c)
        if fc is None:
            return None
        if sgn(fc) == sgn(fb):
            b, fb = c, fc
            if side == -1:
                fa /= 2
            side = -1
        else:
            a, fa, = b, fb
            b, fb = c, fc
            side = 1
        if abs(b - a) > old / 2:
            # force a bisection step now and then
            m = (a + b) / 2
            fm = F(m)
            if fm is None:
                return None
            if sgn(fm) == sgn(fa):
                a, fa = m, fm
            else:
                b, fb = m, fm
    return (a, b, fa, fb)


def golden_min(F, a, c, s, iters=110):
    """Minimise s*F on [a, c]; returns (u, value, crossed_u or None)."""
    gr = (mp.sqrt(5) - 1) / 2
    x1, x2 = c - gr * (c - a), a + gr * (c - a)
    f1, f2 = F(x1), F(x2)
    for _ in range(iters):
        for xx, ff in ((x1, f1), (x2, f2)):
            if ff is not None and s * ff <= 0:
                return xx, ff, xx
        if f1 is None or f2 is None:
            return None
        if s * f1 < s * f2:
            c, x2, f2 = x2, x1, f1
            x1 = c - gr * (c - a)
            f1 = F(x1)
        else:
            a, x1, f1 = x1, x2, f2
            x2 = a + gr * (c - a)
            f2 = F(x2)
        if abs(c - a) <= mp.mpf("1e-40") * max(abs(a), abs(c)):
            break
    return (x1, f1, None) if s * f1 < s * f2 else (x2, f2, None)


def find_roots(prob, scale):
    """All roots of prob.residual over every piece, at 50 digits."""
    fine = lambda u: prob.residual(u)
    roots, near = [], []
    samples_used = 0
    for pts, _desc in prob.pieces():
        pts = sorted(set(pts))
        if len(pts) < 2:
            continue
        with mp.workdps(SAMPLE_DPS):
            coarse = lambda u: prob.residual(u)
            vals = [coarse(u) for u in pts]
            samples_used += len(pts)
            # adaptive bisection where the chord hides structure
            us, fs = [pts[0]], [vals[0]]
            stack = [(pts[i], vals[i], pts[i + 1], vals[i + 1], 0) for i in range(len(pts) - 1)]
            stack.reverse()
            while stack:
                a, fa, b, fb, depth = stack.pop()
                if fa is not None and fb is not None and depth < 10 and sgn(fa) == sgn(fb):
                    m = (a + b) / 2
                    fm = coarse(m)
                    samples_used += 1
                    if fm is not None and (sgn(fm) != sgn(fa) or
                                           abs(fm - (fa + fb) / 2) > min(abs(fa), abs(fb)) / 2):
                        stack.append((m, fm, b, fb, depth + 1))
                        stack.append((a, fa, m, fm, depth + 1))
                        continue
                us.append(b)
                fs.append(fb)
        brackets, minima = [], []
        for i in range(len(us) - 1):
            fa, fb = fs[i], fs[i + 1]
            if fa is None or fb is None:
                continue
            if fa == 0:
                roots.append(us[i])
            if sgn(fa) * sgn(fb) < 0:
                brackets.append((us[i], us[i + 1]))
            if 0 < i and fs[i - 1] is not None and sgn(fs[i - 1]) == sgn(fa) == sgn(fb) != 0 \
                    and abs(fa) < abs(fs[i - 1]) and abs(fa) <= abs(fb):
                minima.append((us[i - 1], us[i + 1], sgn(fa)))
        for a, c, s in minima:
            res = golden_min(fine, a, c, s)
            if res is None:
                continue
            u, fu, crossed = res
            if crossed is not None:
                if fu == 0:
                    roots.append(u)
                else:
                    brackets += [(a, u), (u, c)]
            elif abs(fu) <= mp.mpf("1e-30") * scale:
                roots.append(u)
            else:
                near.append((u, fu))
        for a, b in brackets:
            fa, fb = fine(a), fine(b)
            if fa is None or fb is None or sgn(fa) * sgn(fb) > 0:
                continue
            res = illinois(fine, a, b, fa, fb, mp.mpf("1e-45"))
            if res is None:
                continue
            a2, b2, fa2, fb2 = res
            u, fu = (a2, fa2) if abs(fa2) <= abs(fb2) else (b2, fb2)
            if abs(fu) <= mp.mpf("1e-25") * scale:
                roots.append(u)
            # otherwise a wrap of the coast time by a period, not a root
    roots.sort()
    merged = []
    for u in roots:
        if merged and abs(u - merged[-1]) <= mp.mpf("1e-12") * max(abs(u), abs(merged[-1])):
            continue
        merged.append(u)
    return merged, near, samples_used


# --------------------------------------------------------------------------
# conditioning
# --------------------------------------------------------------------------

def param_keys(prob):
    return [k for k in ("r", "v", "g", "elem", "T", "mu") if k in prob.P]


def perturbed(P, k, h):
    Q = dict(P)
    Q[k] = P[k] * (1 + h)
    return Q


def root_floor(prob, u):
    """(floor per output component [r, v, fpa deg], residual noise dF)."""
    P = prob.P
    h = mp.mpf("1e-20")
    du = h * (abs(u) if u != 0 else 1)
    F = prob.residual
    f0 = F(u)
    fp, fm = F(u + du), F(u - du)
    dFdu = (fp - fm) / (2 * du)
    d2 = mp.mpf("1e-10") * (abs(u) if u != 0 else 1)
    f2p, f2m = F(u + d2), F(u - d2)
    d2F = (f2p - 2 * f0 + f2m) / (d2 * d2) if None not in (f2p, f2m) else mp.mpf(0)
    noise = mp.mpf(0)
    direct = [mp.mpf(0)] * 3
    for k in param_keys(prob):
        if P[k] == 0:
            continue
        a, b = F(u, perturbed(P, k, h)), F(u, perturbed(P, k, -h))
        noise += abs((a - b) / (2 * h))
        oa, ob = prob.output(u, perturbed(P, k, h)), prob.output(u, perturbed(P, k, -h))
        for i in range(3):
            direct[i] += abs((oa[i] - ob[i]) / (2 * h))
    noise *= K_ULP
    lin_u = noise / abs(dFdu) if dFdu != 0 else mp.inf
    quad_u = mp.sqrt(2 * noise / abs(d2F)) if d2F != 0 else mp.inf
    floor_u = min(lin_u, quad_u)
    oa, ob = prob.output(u + du), prob.output(u - du)
    floors = [abs((oa[i] - ob[i]) / (2 * du)) * floor_u + K_ULP * direct[i] for i in range(3)]
    return floors, noise


def state_floor(mu, r, v, g, fn):
    """K * sum |d fn/d y| |y| over the state (r, v, g) and mu."""
    h = mp.mpf("1e-20")
    total = mp.mpf(0)
    base = [mu, r, v, g]
    for i in range(4):
        if base[i] == 0:
            continue
        up, dn = list(base), list(base)
        up[i] *= 1 + h
        dn[i] *= 1 - h
        a, b = fn(*up), fn(*dn)
        if a is None or b is None:
            return mp.inf
        total += abs((a - b) / (2 * h))
    return K_ULP * total


# --------------------------------------------------------------------------
# case generation
# --------------------------------------------------------------------------

def fmt(value, units, rng, allowed=None):
    """Text in a random unit with 17 significant digits; exact value read back."""
    names = allowed or list(units)
    unit = rng.choice(names)
    text = mp.nstr(mp.mpf(value) / units[unit], 17, strip_zeros=False)
    return f"{text}{unit}", mp.mpf(float(text)) * units[unit]


def fmt_angle(g_rad, rng):
    if rng.random() < 0.7:
        text = mp.nstr(mp.degrees(g_rad), 17, strip_zeros=False)
        return f"{text}deg", mp.radians(mp.mpf(float(text)))
    text = mp.nstr(g_rad, 17, strip_zeros=False)
    return f"{text}rad", mp.mpf(float(text))


def flag(name, text):
    return [f"--{name}={text}"] if text.startswith("-") else [f"--{name}", text]


def U(rng, a, b):
    return mp.mpf(rng.uniform(a, b))


def true_state(rng, regime, mu, R):
    """(r, v, g rad) for the regime."""
    r = R * (1 + mp.power(10, U(rng, -2, 0.7)))
    pm = rng.choice([1, -1])
    if regime == "elliptic":
        q = U(rng, 0.3, 1.85)
        g = pm * mp.radians(U(rng, 0.5, 70))
    elif regime == "near-parabolic-ellipse":
        q = 2 * (1 - mp.power(10, U(rng, -7, -3))) ** 2
        g = pm * mp.radians(U(rng, 1, 70))
    elif regime == "near-parabolic-hyperbola":
        q = 2 * (1 + mp.power(10, U(rng, -8, -3))) ** 2
        g = -mp.radians(U(rng, 1, 80))
    elif regime == "near-circular":
        g = pm * mp.radians(mp.power(10, U(rng, -6, -2)))
        s = abs(mp.sin(g))
        e = mp.power(10, U(rng, float(mp.log10(max(s * mp.mpf("1.01"), mp.mpf("1e-7")))), -3))
        q = 1 + rng.choice([1, -1]) * mp.sqrt(e * e - s * s) / mp.cos(g)
    elif regime == "long-coast":
        q = 2 - mp.power(10, U(rng, -2.5, -0.5))
        g = pm * mp.radians(U(rng, 0.5, 50))
    elif regime == "flat-fpa":
        q = rng.choice([U(rng, 0.4, 0.95), U(rng, 1.05, 1.9)])
        g = pm * mp.radians(mp.power(10, U(rng, -9, -3)))
    else:  # steep-fpa
        g = pm * mp.radians(90 - mp.power(10, U(rng, -4, 0)))
        q = U(rng, 0.2, 1.9) if (pm > 0 or rng.random() < 0.7) else U(rng, 2.05, 4)
    return r, mp.sqrt(q * mu / r), g


def make_case(idx, seed, bodyinfo):
    rng = random.Random(f"{seed}:{idx}")
    regime = REGIMES[idx % len(REGIMES)]
    body = BODIES[(idx // len(REGIMES)) % len(BODIES)]
    mu, R = bodyinfo[body]
    r, v, g = true_state(rng, regime, mu, R)
    c = coast(mu, r, v, g)
    closed = c["x"] > 0
    ptype = rng.choice(["A", "B", "C", "D"])
    if not closed:
        kind = "time-to-periapsis"
    else:
        kind = rng.choices(["time-to-apoapsis", "time-to-periapsis", "angle-to-apoapsis"],
                           [0.42, 0.42, 0.16])[0]
    if ptype == "C" and kind == "angle-to-apoapsis":
        kind = rng.choice(["time-to-apoapsis", "time-to-periapsis"])
    args = ["solve", "--body", body]
    P = {"mu": mu, "R": R}
    if ptype != "D":
        if rng.random() < 0.5:
            text, alt = fmt(r - R, LEN_UNITS, rng)
            args += flag("burnout-alt", text)
            P["r"] = R + alt
        else:
            text, P["r"] = fmt(r, LEN_UNITS, rng)
            args += flag("burnout-radius", text)
    if ptype in ("A", "D"):
        text, P["g"] = fmt_angle(g, rng)
        args += flag("fpa", text)
    if ptype in ("B", "D"):
        text, P["v"] = fmt(v, SPEED_UNITS, rng)
        args += flag("speed", text)
    if ptype == "C":
        el = elements(mu, r, v, g)
        choices = ["ecc", "periapsis", "sma"] + (["apoapsis", "angle"] if closed else [])
        which = rng.choice(choices)
        if which in ("periapsis", "apoapsis") and abs(el[f"{which}_radius"] - r) < mp.mpf("1e-6") * r:
            # burnout within 1e-6 of the apsis: the family is fixed by the
            # difference of two nearly equal doubles -- ill-posed, use ecc
            which = "ecc"
        if which == "ecc":
            text = mp.nstr(el["ecc"], 17, strip_zeros=False)
            args += flag("ecc", text)
            P["elem"], ptype = mp.mpf(float(text)), "Cecc"
        elif which in ("periapsis", "apoapsis"):
            rad = el[f"{which}_radius"]
            if rng.random() < 0.5:
                text, alt = fmt(rad - R, LEN_UNITS, rng)
                args += flag(f"{which}-alt", text)
                P["elem"] = R + alt
            else:
                text, P["elem"] = fmt(rad, LEN_UNITS, rng)
                args += flag(f"{which}-radius", text)
            ptype = "Crp" if which == "periapsis" else "Cra"
        elif which == "sma":
            text, P["elem"] = fmt(el["sma"], LEN_UNITS, rng)
            args += flag("sma", text)
            ptype = "Csma"
        else:
            text = mp.nstr(c["angle_apo"], 17, strip_zeros=False)
            args += flag("angle-to-apoapsis", text + "deg")
            P["elem"], ptype = mp.mpf(float(text)), "Cang"
    tv = target_value(kind, c)
    if kind == "angle-to-apoapsis":
        text = mp.nstr(tv, 17, strip_zeros=False)
        args += flag(kind, text + "deg")
        P["T"] = mp.mpf(float(text))
    else:
        units = [u for u in TIME_UNITS if tv / TIME_UNITS[u] >= mp.mpf("0.01")] or ["s"]
        text, P["T"] = fmt(tv, TIME_UNITS, rng, units)
        args += flag(kind, text)
    args += ["--format", "json"]
    return {"idx": idx, "regime": regime, "body": body, "ptype": ptype, "kind": kind,
            "args": args, "P": P, "true": (r, v, g)}


# --------------------------------------------------------------------------
# one case
# --------------------------------------------------------------------------

def verify_state(P, ptype, kind, r_t, v_t, fpa_t):
    """'' if the state meets the target (and element) in the 50-digit model."""
    mu = P["mu"]
    g_t = mp.radians(fpa_t)
    fn = lambda m, r, v, g: target_value(kind, coast(m, r, v, g))
    got = fn(mu, r_t, v_t, g_t)
    if got is None:
        return f"{kind} undefined for this state"
    tol = max(REL * abs(P["T"]), state_floor(mu, r_t, v_t, g_t, fn) + K_ULP * abs(P["T"]))
    if abs(got - P["T"]) > tol:
        return (f"{kind} of the returned state is {mp.nstr(got, 17)}, target {mp.nstr(P['T'], 17)} "
                f"(allowed {mp.nstr(tol, 3)})")
    if ptype in ("Cecc", "Crp", "Cra", "Csma", "Cang"):
        key = {"Cecc": "ecc", "Crp": "periapsis_radius", "Cra": "apoapsis_radius", "Csma": "sma"}.get(ptype)
        if key:
            efn = lambda m, r, v, g: elements(m, r, v, g)[key]
        else:
            efn = lambda m, r, v, g: coast(m, r, v, g)["angle_apo"]
        got_e = efn(mu, r_t, v_t, g_t)
        if got_e is None:
            return f"{key or 'angle-to-apoapsis'} undefined for this state"
        etol = max(REL * abs(P["elem"]), state_floor(mu, r_t, v_t, g_t, efn) + K_ULP * abs(P["elem"]))
        if abs(got_e - P["elem"]) > etol:
            return (f"{key or 'angle-to-apoapsis'} of the returned state is {mp.nstr(got_e, 17)}, "
                    f"target {mp.nstr(P['elem'], 17)} (allowed {mp.nstr(etol, 3)})")
    return ""


POINT_RADIUS = mp.mpf("0.001")


def point_mass_args(case):
    """The case's command line about a point mass of the same mu: the body
    given as --mu and a 1 mm --radius, every altitude given as the radius
    (the double nearest the reference's exact R + altitude)."""
    P, out, it = case["P"], [], iter(case["args"])
    for a in it:
        if a == "--body":
            next(it)
            out += ["--mu", f"{float(P['mu'])!r}m3/s2", "--radius", f"{float(POINT_RADIUS)!r}m"]
            continue
        name, _, text = a.partition("=")
        if name in ("--burnout-alt", "--periapsis-alt", "--apoapsis-alt"):
            if not text:
                next(it)
            key = "r" if name == "--burnout-alt" else "elem"
            out += [name.replace("-alt", "-radius"), f"{float(P[key])!r}m"]
            continue
        out.append(a)
    return out


def judge(res, refs, P, ptype, kind, rc, out, err):
    """Compares the tool's answer (exit code, stdout, stderr) with the
    reference roots `refs` for the body of surface radius P["R"], recording
    problems and counts in `res`."""
    # roots whose path meets the surface before the targeted apsis are no
    # solutions: kept apart, the tool must not return them
    through = []
    for rf in refs:
        verdict = meets_surface_first(P, kind, rf["out"])
        if verdict is None:
            rf["optional"] = True
        elif verdict:
            through.append(rf)
    refs = [rf for rf in refs if not any(rf is t for t in through)]
    res["through"] = [f"r={mp.nstr(rf['out'][0], 17)} v={mp.nstr(rf['out'][1], 17)} "
                      f"fpa={mp.nstr(rf['out'][2], 17)}" for rf in through]
    res["ref"] = [f"#{i + 1} r={mp.nstr(rf['out'][0], 17)} v={mp.nstr(rf['out'][1], 17)} "
                  f"fpa={mp.nstr(rf['out'][2], 17)}" + (" (ill-conditioned)" if rf["ill"] else "")
                  + ((" (optional: beyond the documented search range)" if rf.get("beyond") else
                     " (optional: within double noise)") if rf["optional"] else "") for i, rf in enumerate(refs)]
    required = [rf for rf in refs if not rf["optional"]]
    res["nref"] = len(required)
    res["nopt"] = len(refs) - len(required)
    res["ill"] = sum(1 for rf in required if rf["ill"])
    # tool
    tool = []
    if rc == 0:
        try:
            doc = json.loads(out)
            for s in doc.get("solutions", []):
                rr = s.get("burnout_radius_m", doc.get("burnout_radius_m"))
                tool.append({"out": [mp.mpf(rr), mp.mpf(s["speed_m_s"]), mp.mpf(s["flight_path_angle_deg"])],
                             "branch": s.get("branch"), "nu": s.get("true_anomaly_deg")})
        except (ValueError, KeyError, TypeError) as exc:
            res["problems"].append(f"unparseable JSON output ({exc})")
    elif rc == 3:
        if required:
            res["problems"].append(f"exit 3 although {len(required)} root(s) exist: {err}")
        elif through and "every solution meets the surface before" not in err and \
                any(not rf["ill"] for rf in through):
            res["problems"].append(
                f"exit 3, but not for the surface although the only roots meet it first: {err}")
    else:
        res["problems"].append(f"exit {rc}: {err}")
    res["ntool"] = len(tool)
    # matching (maximum bipartite)
    def ok(rf, tl):
        return all(abs(tl["out"][i] - rf["out"][i]) <= rf["tol"][i] for i in range(3))
    adj = [[j for j, tl in enumerate(tool) if ok(rf, tl)] for rf in refs]
    owner = {}
    def augment(i, seen):
        for j in adj[i]:
            if j in seen:
                continue
            seen.add(j)
            if j not in owner or augment(owner[j], seen):
                owner[j] = i
                return True
        return False
    order = [i for i, rf in enumerate(refs) if not rf["optional"]] + \
            [i for i, rf in enumerate(refs) if rf["optional"]]
    for i in order:
        augment(i, set())
    matched = {i: j for j, i in owner.items()}
    names = ["burnout_radius_m", "speed_m_s", "flight_path_angle_deg"]
    for i, rf in enumerate(refs):
        if rf["optional"]:
            continue
        if i in matched:
            res["found"] += 1
            tl = tool[matched[i]]
            errs = [abs(tl["out"][k] - rf["out"][k]) for k in range(3)]
            if rf["ill"]:
                res["ill_ratio"] = max(res["ill_ratio"], max(errs[k] / rf["tol"][k] for k in range(3)))
            else:
                res["max_rel"] = max(res["max_rel"], max(errs[k] / abs(rf["out"][k])
                                                         for k in range(3) if rf["out"][k] != 0))
        elif rc == 0:
            res["missed"] += 1
            best = ""
            if tool:
                j = min(range(len(tool)), key=lambda j: max(abs(tool[j]["out"][k] - rf["out"][k]) / rf["tol"][k]
                                                           for k in range(3)))
                k = max(range(3), key=lambda k: abs(tool[j]["out"][k] - rf["out"][k]) / rf["tol"][k])
                best = (f"; nearest tool root off in {names[k]} by "
                        f"{mp.nstr(abs(tool[j]['out'][k] - rf['out'][k]), 3)} (allowed {mp.nstr(rf['tol'][k], 3)})")
            res["problems"].append("missed reference root #{} r={} m v={} m/s fpa={} deg{}{}".format(
                i + 1, *[mp.nstr(x, 17) for x in rf["out"]], " (ill-conditioned)" if rf["ill"] else "", best))
        else:
            res["missed"] += 1
    for i, rf in enumerate(required):
        # self-consistency: the reference root rounded to doubles must pass
        # the same independent check the tool roots get
        rounded = [mp.mpf(float(x)) for x in rf["out"]]
        note = verify_state(P, ptype, kind, *rounded)
        if note:
            res["problems"].append(f"REFERENCE SELF-CHECK: rounded reference root fails: {note}")
    for j, tl in enumerate(tool):
        r_t, v_t, fpa_t = tl["out"]
        target_note = verify_state(P, ptype, kind, r_t, v_t, fpa_t)
        if target_note:
            res["problems"].append(
                f"tool root r={mp.nstr(r_t, 17)} v={mp.nstr(v_t, 17)} fpa={mp.nstr(fpa_t, 17)} "
                f"fails the 50-digit model: {target_note}")
        want_branch = "ascending" if fpa_t > 0 else "descending" if fpa_t < 0 else None
        if want_branch and tl["branch"] != want_branch:
            res["problems"].append(f"tool root fpa={fpa_t} labelled {tl['branch']}")
        if j not in owner:
            res["extra"] += 1
            ratios = [max(abs(r_t - rf["out"][0]) / rf["tol"][0], abs(v_t - rf["out"][1]) / rf["tol"][1],
                          abs(fpa_t - rf["out"][2]) / rf["tol"][2]) for rf in refs]
            i = min(range(len(refs)), key=lambda i: ratios[i]) if refs else None
            if any(ok(rf, tl) for rf in through):
                verdict = "its path meets the surface before the targeted apsis: not a solution"
            elif i is not None and ratios[i] <= 1:
                verdict = f"a duplicate of reference root #{i + 1}, already matched by another tool root"
            elif i is not None and ratios[i] < 1e6:
                verdict = (f"near reference root #{i + 1} but off by {mp.nstr(ratios[i], 3)} times the allowance"
                           + ("" if target_note else "; its state meets the targets to 1e-9 relative, but the root is "
                              "pinned much tighter than that"))
            elif not target_note:
                verdict = "meets the target in the 50-digit model yet matches no reference root: " \
                          "the REFERENCE may be incomplete"
            else:
                verdict = "does not meet the target"
            res["problems"].append(
                f"extra tool root r={mp.nstr(r_t, 17)} m v={mp.nstr(v_t, 17)} m/s "
                f"fpa={mp.nstr(fpa_t, 17)} deg ({verdict})")
    res["ok"] = not res["problems"]
    # With --report-ill-conditioned (what CI uses; see the docstring), a case
    # whose only disagreements concern ill-conditioned reference roots is
    # printed and counted as 'ill-posed' but does not fail the run.
    if not res["ok"] and REPORT_ILL:
        well_missed = any(not rf["ill"] and i not in matched
                          for i, rf in enumerate(refs) if not rf["optional"])
        def near_ill(tl):
            return any(rf["ill"] and max(abs(tl["out"][k] - rf["out"][k]) / rf["tol"][k] for k in range(3)) < 1e6
                       for rf in refs)
        stray = any(j not in owner and not near_ill(tl) for j, tl in enumerate(tool))
        bad_exit = rc not in (0, 3) or (rc == 3 and any(not rf["ill"] for rf in required))
        if not (well_missed or stray or bad_exit):
            res["ok"] = True
            res["ill_posed"] = True


def run_case(case, binary):
    P, ptype, kind = case["P"], case["ptype"], case["kind"]
    prob = Problem(ptype, P, kind)
    res = {"idx": case["idx"], "regime": case["regime"], "cmd": " ".join(shlex.quote(a) for a in
                                                                           [binary] + case["args"]),
           "problems": [], "ref": [], "found": 0, "missed": 0, "extra": 0, "ill": 0,
           "max_rel": mp.mpf(0), "ill_ratio": mp.mpf(0), "ntool": 0, "notes": []}
    try:
        proc = subprocess.run([binary] + case["args"], capture_output=True, text=True, timeout=120)
        rc, out, err = proc.returncode, proc.stdout, proc.stderr.strip()
    except subprocess.TimeoutExpired:
        rc, out, err = None, "", "timeout after 120 s"
    # reference
    scale = abs(P["T"]) + 1
    roots, near, nsamp = find_roots(prob, scale)
    res["samples"] = nsamp
    refs = []
    for u in roots:
        out_vals = prob.output(u)
        floors, noise = root_floor(prob, u)
        tol = [max(REL * abs(out_vals[i]), FLOOR_FACTOR * floors[i]) for i in range(3)]
        ill = any(floors[i] > REL * abs(out_vals[i]) for i in range(3))
        refs.append({"u": u, "out": out_vals, "tol": tol, "ill": ill, "optional": False,
                     "noise": noise})
    if ptype == "D":
        for rf in refs:
            if rf["out"][0] > FREE_RADIUS_MAX * P["R"]:
                rf["optional"] = rf["beyond"] = True
    # roots that only exist within the double-precision noise of the residual
    for i in range(len(refs) - 1):
        a, b = refs[i]["u"], refs[i + 1]["u"]
        fm = prob.residual((a + b) / 2)
        if fm is not None and abs(fm) <= 10 * max(refs[i]["noise"], refs[i + 1]["noise"]):
            refs[i]["optional"] = refs[i + 1]["optional"] = True
    for u, fu in near:
        _floors, noise = root_floor(prob, u)
        if abs(fu) <= 10 * noise:
            out_vals = prob.output(u)
            floors, _ = root_floor(prob, u)
            tol = [max(REL * abs(out_vals[i]), FLOOR_FACTOR * floors[i]) for i in range(3)]
            refs.append({"u": u, "out": out_vals, "tol": tol, "ill": True, "optional": True,
                         "noise": noise})
    judge(res, [dict(rf) for rf in refs], P, ptype, kind, rc, out, err)
    # A root that meets the surface first is no solution about the real body,
    # but the root finder must still find it: fixed-radius problems (A, B, C)
    # are run again about a point mass of the body's mu (radius 1 mm, every
    # radius given as a radius), where the same roots must all be returned.
    # A free radius (D) is searched from the surface up, so has no such twin.
    if res["through"] and ptype != "D":
        pargs = point_mass_args(case)
        try:
            proc = subprocess.run([binary] + pargs, capture_output=True, text=True, timeout=120)
            rc2, out2, err2 = proc.returncode, proc.stdout, proc.stderr.strip()
        except subprocess.TimeoutExpired:
            rc2, out2, err2 = None, "", "timeout after 120 s"
        twin = {"problems": [], "found": 0, "missed": 0, "extra": 0, "ill": 0,
                "max_rel": mp.mpf(0), "ill_ratio": mp.mpf(0), "ntool": 0}
        judge(twin, [dict(rf) for rf in refs], dict(P, R=POINT_RADIUS), ptype, kind, rc2, out2, err2)
        res["twin"] = {"found": twin["found"], "ref": twin["nref"]}
        if twin["problems"]:
            # a failure fails the case; disagreements on ill-conditioned
            # roots only (--report-ill-conditioned) are shown as ILL
            if not twin["ok"]:
                res["ok"] = False
            elif res["ok"]:
                res["ill_posed"] = True
            res["problems"].append("point-mass run: " + " ".join(shlex.quote(x) for x in [binary] + pargs))
            res["problems"].extend("point-mass run: " + x for x in twin["problems"])
    res["max_rel"] = float(res["max_rel"])
    res["ill_ratio"] = float(res["ill_ratio"])
    res["P"] = {k: mp.nstr(v, 20) for k, v in P.items()}
    return res


def worker(job):
    case, binary = job
    mp.mp.dps = BASE_DPS
    return run_case(case, binary)


# --------------------------------------------------------------------------

REPORT_ILL = False


def main(argv):
    global REPORT_ILL
    verbose = "--verbose" in argv
    REPORT_ILL = "--report-ill-conditioned" in argv
    pos = [a for a in argv[1:] if a not in ("--verbose", "--report-ill-conditioned")]
    if not pos:
        print(__doc__.splitlines()[2].strip())
        return 2
    binary = pos[0]
    n = int(pos[1]) if len(pos) > 1 else 300
    seed = int(pos[2]) if len(pos) > 2 else 1
    if not self_test():
        return 1
    bodyinfo = {}
    for body in BODIES:
        doc = json.loads(subprocess.run(
            [binary, "solve", "--body", body, "--burnout-alt", "100km", "--speed", "1", "--fpa", "0",
             "--format", "json"], capture_output=True, text=True, check=True).stdout)["body"]
        bodyinfo[body] = (mp.mpf(doc["mu_m3_s2"]), mp.mpf(doc["radius_m"]))
    cases = [make_case(i, seed, bodyinfo) for i in range(n)]
    jobs = [(c, binary) for c in cases]
    workers = max(1, min(os.cpu_count() or 1, 8))
    if workers > 1:
        with ProcessPoolExecutor(max_workers=workers) as pool:
            results = list(pool.map(worker, jobs, chunksize=2))
    else:
        results = [worker(j) for j in jobs]
    stats = {rg: {"cases": 0, "failed": 0, "ref": 0, "opt": 0, "found": 0, "missed": 0, "extra": 0, "ill": 0,
                  "max_rel": 0.0, "ill_ratio": 0.0} for rg in REGIMES}
    for case, res in zip(cases, results):
        st = stats[res["regime"]]
        st["cases"] += 1
        for k in ("found", "missed", "extra", "ill"):
            st[k] += res[k]
        st["ref"] += res["nref"]
        st["opt"] += res["nopt"]
        st["max_rel"] = max(st["max_rel"], res["max_rel"])
        st["ill_ratio"] = max(st["ill_ratio"], res["ill_ratio"])
        if res.get("ill_posed"):
            st["ill_posed"] = st.get("ill_posed", 0) + 1
        if verbose or not res["ok"] or res.get("ill_posed"):
            print(f"{'FAIL' if not res['ok'] else 'ILL ' if res.get('ill_posed') else 'ok  '} [case {res['idx']}: {res['regime']}, {case['ptype']}, {case['kind']}] "
                  f"{res['cmd']}")
            print(f"     reference roots (r m, v m/s, fpa deg): {'; '.join(res['ref']) or 'none'}")
            if res["through"]:
                print(f"     roots that meet the surface first (no solutions): {'; '.join(res['through'])}")
            for p in res["problems"]:
                print(f"     - {p}")
        if not res["ok"]:
            st["failed"] += 1
    print()
    head = f"{'regime':<26}{'cases':>6}{'failed':>7}{'ref roots':>10}{'found':>7}{'missed':>7}" \
           f"{'extra':>6}{'ill-cond':>9}{'optional':>9}{'max rel err':>13}{'ill err/allow':>14}"
    print(head)
    print("-" * len(head))
    for rg in REGIMES:
        st = stats[rg]
        print(f"{rg:<26}{st['cases']:>6}{st['failed']:>7}{st['ref']:>10}{st['found']:>7}{st['missed']:>7}"
              f"{st['extra']:>6}{st['ill']:>9}{st['opt']:>9}{st['max_rel']:>13.2e}{st['ill_ratio']:>14.2e}")
    failed = sum(1 for r in results if not r["ok"])
    ill_posed = sum(1 for r in results if r.get("ill_posed"))
    if ill_posed:
        print(f"{ill_posed} case(s) disagree only on ill-conditioned roots (marked ILL above): "
              "reported, not failed (--report-ill-conditioned)")
    twins = [r["twin"] for r in results if "twin" in r]
    if twins:
        print(f"{len(twins)} case(s) with roots that meet the surface first, run again about a point mass: "
              f"{sum(t['found'] for t in twins)} of {sum(t['ref'] for t in twins)} reference roots found there")
    print(f"{len(results) - failed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
