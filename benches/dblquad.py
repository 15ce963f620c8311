#!/usr/bin/env python3
"""Compare websigma's patch integral with scipy.integrate.dblquad.

Computes, for the benchmark patch of ``cargo bench --bench solver`` (part 2,
``edges`` profile) and its three field points P1, P2, P3, the potential V and
the three field components with ``scipy.integrate.dblquad`` -- what a user
would otherwise script -- and compares accuracy and cost with websigma.

Patch (its own frame: u along, y across, h normal), Coulomb's law:

    V(P) = 1/(4 pi eps0) * int_0^L int_{-w/2}^{w/2} sigma(u', y') / R  dy' du'
    E(P) = 1/(4 pi eps0) * int int sigma(u', y') (P - r') / R^3       dy' du'
    sigma(u', y') = A exp(-u'/lambda) (1 + k (2 y'/w)^2)

    symbol   meaning                                   unit
    A        amplitude, 1e-5                           C/m^2
    lambda   decay length, 5                           m
    L, w     patch length 1, width 1.25                m
    k        edges coefficient, 0.6                    1
    P        field point (u, y, h)                     m
    R        |P - r'|, r' = (u', y', 0)                m
    eps0     8.8541878128e-12 (CODATA 2018)            F/m

Each of V, E_u, E_y, E_h is one ``dblquad`` call with epsabs = 0 and
epsrel = 1e-9, and again with epsrel = 1e-6 (what dblquad manages when 1e-9
fails or is slow close to the sheet). The time per point is the sum of the
four calls, the median of a few runs. The reference values (websigma at
rel_tol 1e-12), websigma's own values at rel_tol 1e-9 and its time per point
are read from ``target/bench-reference.json``, written by the benchmark; run
it first:

    pip install scipy                 # this script installs nothing itself
    cargo bench --bench solver
    python3 benches/dblquad.py

Errors are relative: |V - V_ref| / |V_ref| and |E - E_ref| / |E_ref| (vector
norms). Assumptions: thin sheet in free space, as in websigma.

Second table: the 20-span serpentine with a ground plane of part 3 of the
benchmark (edges k = 0.6, tau = 5 s, so lambda = 5 m), at points 1 m, 25 mm and
0.5 mm from the middle of its last span. websigma's time is one
``WebField::at`` per point (every span and its image, rel_tol 1e-9); dblquad's
is V, Ex, Ey, Ez of every span and image (40 patches, 160 dblquad calls per
point) at epsrel 1e-9, then 1e-6. The reference is every span and image by
websigma's double-exponential rule at rel_tol 1e-12 (not its fast path). Each
patch is integrated in its span's frame (u along, y across, h along the
normal n = (-t_z, 0, t_x)) and turned to global axes, E = E_u t + E_y y + E_h n;
the image of a span in the plane z = z_g carries -sigma, so its potential at P
is -V(MP) and its field -M E(MP), M the reflection (method of images,
Griffiths section 3.2). The ratio per distance is dblquad's time over
websigma's; the overall ratio is the summed times' ratio.

Reference: Coulomb's law, D. J. Griffiths, Introduction to Electrodynamics,
4th ed., section 2.1; scipy.integrate.dblquad (nested QUADPACK qags).
"""

import json
import math
import pathlib
import statistics
import sys
import time
import warnings

try:
    from scipy import integrate
except ImportError:
    sys.exit("this script needs scipy: pip install scipy")

EPS0 = 8.8541878128e-12  # F/m, CODATA 2018
COULOMB = 1.0 / (4.0 * math.pi * EPS0)
REFERENCE = pathlib.Path(__file__).resolve().parent.parent / "target" / "bench-reference.json"
TOLERANCES = (1e-9, 1e-6)
# Stop repeating a point's timing once one run took longer than this [s].
LONG_RUN = 5.0
RUNS = 3


def integrals(doc, p, epsrel):
    """V, E_u, E_y, E_h at p with dblquad; returns (values, warning texts)."""
    a = doc["amplitude"]
    lam = doc["decay_length"]
    length = doc["length"]
    w = doc["width"]
    k = doc["edges_k"]
    u, y, h = p

    def sigma(yp, up):
        return a * math.exp(-up / lam) * (1.0 + k * (2.0 * yp / w) ** 2)

    def r(yp, up):
        return math.sqrt((u - up) ** 2 + (y - yp) ** 2 + h * h)

    kernels = (
        lambda yp, up: sigma(yp, up) / r(yp, up),
        lambda yp, up: sigma(yp, up) * (u - up) / r(yp, up) ** 3,
        lambda yp, up: sigma(yp, up) * (y - yp) / r(yp, up) ** 3,
        lambda yp, up: sigma(yp, up) * h / r(yp, up) ** 3,
    )
    out = []
    notes = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        for f in kernels:
            val, _err = integrate.dblquad(
                f, 0.0, length, -0.5 * w, 0.5 * w, epsabs=0.0, epsrel=epsrel
            )
            out.append(COULOMB * val)
    for c in caught:
        text = str(c.message).strip().splitlines()[0]
        if text not in notes:
            notes.append(text)
    return out, notes


def patch_integrals(pa, lam, pieces, p, epsrel):
    """V, E_u, E_y, E_h [V, V/m] of one patch (its own frame) at p = (u, y, h)."""
    amp, length = pa["amplitude"], pa["length"]
    u, y, h = p
    out = [0.0, 0.0, 0.0, 0.0]
    notes = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        for y_lo, y_hi, c0, c1, c2 in pieces:

            def sigma(yp, up):
                return amp * math.exp(-up / lam) * (c0 + yp * (c1 + c2 * yp))

            def r(yp, up):
                return math.sqrt((u - up) ** 2 + (y - yp) ** 2 + h * h)

            kernels = (
                lambda yp, up: sigma(yp, up) / r(yp, up),
                lambda yp, up: sigma(yp, up) * (u - up) / r(yp, up) ** 3,
                lambda yp, up: sigma(yp, up) * (y - yp) / r(yp, up) ** 3,
                lambda yp, up: sigma(yp, up) * h / r(yp, up) ** 3,
            )
            for i, f in enumerate(kernels):
                val, _err = integrate.dblquad(
                    f, 0.0, length, y_lo, y_hi, epsabs=0.0, epsrel=epsrel
                )
                out[i] += COULOMB * val
    for c in caught:
        text = str(c.message).strip().splitlines()[0]
        if text not in notes:
            notes.append(text)
    return out, notes


def line_integrals(line, at, epsrel):
    """V and E = (Ex, Ey, Ez) of every span and image of the serpentine at `at`."""
    lam = line["decay_length"]
    pieces = line["across"]
    zg = line["ground_plane"]
    total = [0.0, 0.0, 0.0, 0.0]
    notes = []
    for span in line["spans"]:
        (x0, z0), (dx, dz) = span["start"], span["direction"]
        for sign, q in ((1.0, at), (-1.0, (at[0], at[1], 2.0 * zg - at[2]))):
            rel = (q[0] - x0, q[2] - z0)
            u = rel[0] * dx + rel[1] * dz
            h = -rel[0] * dz + rel[1] * dx
            for pa in span["patches"]:
                vals, warn = patch_integrals(pa, lam, pieces, (u - pa["offset"], q[1], h), epsrel)
                notes.extend(w for w in warn if w not in notes)
                v, eu, ey, eh = vals
                ex = eu * dx - eh * dz
                ez = eu * dz + eh * dx
                total[0] += sign * v
                total[1] += sign * ex
                total[2] += sign * ey
                total[3] += ez  # the image's -M E: E_z keeps its sign
    return total, notes


def line_table(doc):
    """Rows of the serpentine comparison and the summed times (dblquad, websigma) [s]."""
    line = doc["line"]
    rows, notes = [], []
    sums = {tol: [0.0, 0.0] for tol in TOLERANCES}
    for pt in line["points"]:
        ref = pt["reference"]
        ours = pt["websigma"]
        ours_err = rel_errors([ours["v"], *ours["e"]], ref)
        ours_us = pt["websigma_us_per_point"]
        for tol in TOLERANCES:
            t = time.perf_counter()
            vals, warn = line_integrals(line, pt["at"], tol)
            us = (time.perf_counter() - t) * 1e6
            sums[tol][0] += us
            sums[tol][1] += ours_us
            ev, ee = rel_errors(vals, ref)
            mark = ""
            if warn:
                notes.append(f"{pt['distance'] * 1e3:g} mm, epsrel {tol:g}: " + "; ".join(warn))
                mark = " (warning)"
            rows.append(
                f"| {pt['distance'] * 1e3:g} mm | {tol:g}{mark} | {us / 1e6:,.2f} s "
                f"| {ev:.1e} | {ee:.1e} | {ours_us:.1f} | {ours_err[0]:.1e} "
                f"| {ours_err[1]:.1e} | {us / ours_us:,.0f}× |"
            )
            print(rows[-1], flush=True)
    for tol, (d, w) in sums.items():
        rows.append(
            f"| all three | {tol:g} | {d / 1e6:,.2f} s | | | {w:.1f} | | | {d / w:,.0f}× |"
        )
    return rows, notes


def rel_errors(got, ref):
    v_ref = ref["v"]
    e_ref = ref["e"]
    ev = abs(got[0] - v_ref) / abs(v_ref)
    de = math.sqrt(sum((g - e) ** 2 for g, e in zip(got[1:], e_ref)))
    ee = de / math.sqrt(sum(e * e for e in e_ref))
    return ev, ee


def main():
    try:
        doc = json.loads(REFERENCE.read_text())
    except OSError as e:
        sys.exit(f"cannot read {REFERENCE} ({e}): run `cargo bench --bench solver` first")
    rows = []
    notes = []
    for pt in doc["points"]:
        ref = pt["reference"]
        ours = pt["websigma"]
        ours_err = rel_errors([ours["v"], *ours["e"]], ref)
        ours_us = pt["websigma_us_per_point"]
        for tol in TOLERANCES:
            times = []
            vals, warn = None, []
            for _ in range(RUNS):
                t = time.perf_counter()
                vals, warn = integrals(doc, pt["at"], tol)
                times.append(time.perf_counter() - t)
                if times[-1] > LONG_RUN:
                    break
            us = statistics.median(times) * 1e6
            ev, ee = rel_errors(vals, ref)
            mark = ""
            if warn:
                notes.append(f"{pt['name']}, epsrel {tol:g}: " + "; ".join(warn))
                mark = " (warning)"
            rows.append(
                f"| {pt['name']} (h = {pt['at'][2] * 1e3:g} mm) | {tol:g}{mark} "
                f"| {us:,.0f} | {ev:.1e} | {ee:.1e} | {ours_us:.2f} "
                f"| {ours_err[0]:.1e} | {ours_err[1]:.1e} | {us / ours_us:,.0f}× |"
            )
    print(
        "| point | dblquad epsrel | dblquad µs/point | dblquad err V | dblquad err E "
        "| websigma µs/point (rel_tol 1e-9) | websigma err V | websigma err E "
        "| time ratio dblquad / websigma |"
    )
    print("| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
    for r in rows:
        print(r)
    if notes:
        print()
        for n in notes:
            print(f"- {n}")
    if "line" not in doc:
        return
    print()
    print(
        "20-span serpentine with a ground plane (part 3 of the benchmark), points "
        "from the middle of its last span; websigma: one WebField::at per point "
        "(20 spans + 20 images, rel_tol 1e-9); dblquad: V, Ex, Ey, Ez of every "
        "span and image (160 calls per point); target: ratio >= 10,000x at equal "
        "or better accuracy"
    )
    print()
    header = (
        "| distance from the span | dblquad epsrel | dblquad time/point | dblquad err V "
        "| dblquad err E | websigma µs/point | websigma err V | websigma err E "
        "| time ratio dblquad / websigma |"
    )
    print(header)
    print("| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: |", flush=True)
    rows, notes = line_table(doc)
    print()
    print(header)
    print("| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
    for r in rows:
        print(r)
    if notes:
        print()
        for n in notes:
            print(f"- {n}")


if __name__ == "__main__":
    main()
