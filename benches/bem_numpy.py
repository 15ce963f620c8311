#!/usr/bin/env python3
"""The unit cube capacitance of ``cargo bench --bench bem``, scripted with numpy/scipy.

Solves the same problem as part 1 of the boundary-element benchmark -- an
isolated cube of side a = 1 m, no ground plane -- the way a user would script
it: the same mesh of flat rectangular panels (websigma's edge grading
re-implemented below, so the panel counts and positions are identical), the
closed-form potential of a uniformly charged rectangle at every collocation
point (vectorised with numpy, row block by row block, no far-field
shortcut), and a dense LU solve with ``scipy.linalg.lu_factor`` /
``lu_solve``. It times assembly and factorisation at each panel count,
checks that the capacitance agrees with websigma's, and prints a table with
the time ratio numpy / websigma.

Point-matching collocation (R. F. Harrington, Field Computation by Moment
Methods, 1968, ch. 1-2): with the cube at potential V = 1,

    sum_j G_ij q_j = V   for every panel centroid x_i,
    G_ij = int_panel_j dA' / |x_i - r'|,
    C / (4 pi eps0 a) = sum_j q_j A_j / (V a),

and in panel j's own frame (field point at u, v, h; the panel is
[-hu, hu] x [-hv, hv]) the standard closed form of the rectangle integral,

    F(x, y) = x asinh(y / sqrt(x^2 + h^2)) + y asinh(x / sqrt(y^2 + h^2))
              - |h| atan(x y / (|h| R)),     R = sqrt(x^2 + y^2 + h^2),
    G = F(x2, y2) - F(x2, y1) - F(x1, y2) + F(x1, y1),
    x1,2 = -+hu - u,   y1,2 = -+hv - v,

(each term taken as 0 where its prefactor is 0: the self term, h = 0, gives
4 [hu asinh(hv/hu) + hv asinh(hu/hv)]).

    symbol   meaning                                       unit
    a        cube side, 1                                  m
    G_ij     influence of panel j at centroid x_i          m
    q_j      sigma_j / (4 pi eps0)                         V/m
    A_j      panel area, 4 hu hv                           m^2
    hu, hv   panel half-sides                              m
    V        cube potential, 1                             V
    C        capacitance                                   F

Panel nodes along an edge of n panels (grading g = 0.5, both ends edges):
s_i = (1 - g) i/n + g (1 - cos(pi i/n))/2, as websigma's panels module.

websigma's panel counts, capacitances and times are read from
``target/bench-bem.json``, written by the benchmark; run it first:

    python3 -m venv /tmp/venv && /tmp/venv/bin/pip install numpy scipy
                                      # this script installs nothing itself
    cargo bench --bench bem
    /tmp/venv/bin/python benches/bem_numpy.py

Assumptions: perfect conductor in vacuum, as in websigma. The published value
0.6606785 (F. H. Read, J. Comput. Phys. 133, 1997; C.-O. Hwang and M. Mascagni,
J. Appl. Phys. 95, 2004) is quoted from memory. numpy's element-wise
functions run on one thread; scipy's LU runs in its BLAS/LAPACK on as many
threads as that library chooses (printed). On a machine busy with other work,
OpenBLAS's threads can make small factorisations far slower than on one
thread: compare with ``OPENBLAS_NUM_THREADS=1``. Timing: median of a few
wall-clock runs.

Columns: numpy's assembly and lu_factor (with the mesh), lu_solve of the one
right-hand side; websigma's Bem::new (meshing, assembly, LU, capacitance
solve), its assembly (far-field Gauss rules, 2 threads), its LU (faer, 2
threads) and the same matrix with the exact closed form everywhere on one
thread (the like-for-like counterpart of this script's assembly); the
ratios numpy / websigma; both capacitances, their relative difference and
numpy's error against the published value.
"""

import json
import math
import os
import pathlib
import statistics
import sys
import time

try:
    import numpy as np
    import scipy
    from scipy.linalg import lu_factor, lu_solve
except ImportError:
    sys.exit("this script needs numpy and scipy: pip install numpy scipy")

CUBE = 0.6606785  # C / (4 pi eps0 a), published (from memory, see above)
REFERENCE = pathlib.Path(__file__).resolve().parent.parent / "target" / "bench-bem.json"
RUNS = 3
# Rows of the matrix built per numpy call (bounds the temporaries to a few hundred MB).
BLOCK = 256


def graded_nodes(n, g):
    """Nodes on [0, 1] graded towards both ends, as websigma meshes a plate."""
    x = np.arange(n + 1) / n
    s = (1.0 - g) * x + g * 0.5 * (1.0 - np.cos(np.pi * x))
    s[-1] = 1.0
    return s


def cube_mesh(per_edge, g):
    """Panels of the unit cube: centres (n, 3), in-plane unit vectors eu, ev (n, 3), half-sides."""
    s = graded_nodes(per_edge, g)
    mid = 0.5 * (s[:-1] + s[1:])
    half = 0.5 * np.diff(s)
    cu, cv = np.meshgrid(mid, mid, indexing="ij")
    hu, hv = np.meshgrid(half, half, indexing="ij")
    cu, cv, hu, hv = cu.ravel(), cv.ravel(), hu.ravel(), hv.ravel()
    e = np.eye(3)
    # Two faces normal to each axis: (corner, first edge, second edge), websigma's order.
    faces = [
        (np.zeros(3), e[1], e[2]),
        (e[0], e[1], e[2]),
        (np.zeros(3), e[0], e[2]),
        (e[1], e[0], e[2]),
        (np.zeros(3), e[0], e[1]),
        (e[2], e[0], e[1]),
    ]
    centres, eus, evs = [], [], []
    for origin, a, b in faces:
        centres.append(origin + cu[:, None] * a + cv[:, None] * b)
        eus.append(np.broadcast_to(a, (cu.size, 3)))
        evs.append(np.broadcast_to(b, (cu.size, 3)))
    n = 6 * cu.size
    return (
        np.concatenate(centres),
        np.concatenate(eus),
        np.concatenate(evs),
        np.tile(hu, 6).reshape(n),
        np.tile(hv, 6).reshape(n),
    )


def corner_term(x, y, h):
    """F(x, y) of the closed form (see the docstring), element-wise; h = |height| >= 0."""
    r = np.sqrt(x * x + y * y + h * h)
    rx = np.sqrt(x * x + h * h)
    ry = np.sqrt(y * y + h * h)
    with np.errstate(divide="ignore", invalid="ignore"):
        t1 = np.where(x != 0.0, x * np.arcsinh(y / rx), 0.0)
        t2 = np.where(y != 0.0, y * np.arcsinh(x / ry), 0.0)
        t3 = np.where(h > 0.0, h * np.arctan(x * y / (h * r)), 0.0)
    return t1 + t2 - t3


def assemble(centres, eu, ev, hu, hv):
    """G_ij = int_panel_j dA'/|x_i - r'| for every centroid i and panel j (closed form everywhere)."""
    n = len(centres)
    en = np.cross(eu, ev)
    g = np.empty((n, n))
    for i0 in range(0, n, BLOCK):
        d = centres[i0 : i0 + BLOCK, None, :] - centres[None, :, :]  # x_i - c_j
        u = np.einsum("ijk,jk->ij", d, eu)
        v = np.einsum("ijk,jk->ij", d, ev)
        h = np.abs(np.einsum("ijk,jk->ij", d, en))
        x1, x2 = -hu - u, hu - u
        y1, y2 = -hv - v, hv - v
        g[i0 : i0 + BLOCK] = (
            corner_term(x2, y2, h)
            - corner_term(x2, y1, h)
            - corner_term(x1, y2, h)
            + corner_term(x1, y1, h)
        )
    return g


def cube_capacitance(per_edge, g):
    """(C/(4 pi eps0 a), panels, assembly s, lu_factor s, lu_solve s) for one run."""
    t0 = time.perf_counter()
    centres, eu, ev, hu, hv = cube_mesh(per_edge, g)
    mat = assemble(centres, eu, ev, hu, hv)
    t1 = time.perf_counter()
    lu = lu_factor(mat, overwrite_a=True, check_finite=False)
    t2 = time.perf_counter()
    q = lu_solve(lu, np.ones(len(centres)), check_finite=False)
    t3 = time.perf_counter()
    c = float(np.sum(q * 4.0 * hu * hv))  # a = 1 m, V = 1 V
    return c, len(centres), t1 - t0, t2 - t1, t3 - t2


def machine_ticks():
    """(busy, total) CPU ticks of the machine so far, from /proc/stat; None if unreadable."""
    try:
        with open("/proc/stat") as f:
            t = [int(v) for v in f.readline().split()[1:9]]
    except (OSError, ValueError):
        return None
    idle = t[3] + t[4]
    return sum(t) - idle, sum(t)


def own_seconds():
    """CPU seconds used by this process so far."""
    t = os.times()
    return t.user + t.system


def blas_name():
    try:
        cfg = scipy.show_config(mode="dicts")
        return cfg["Build Dependencies"]["lapack"]["name"]
    except Exception:  # the layout of show_config differs between versions
        return "unknown LAPACK"


def main():
    try:
        doc = json.loads(REFERENCE.read_text())
    except OSError as e:
        sys.exit(f"cannot read {REFERENCE} ({e}): run `cargo bench --bench bem` first")
    ncpu = os.cpu_count() or 1
    print(
        f"numpy {np.__version__}, scipy {scipy.__version__} ({blas_name()}, "
        f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', 'unset')}), "
        f"nproc = {ncpu}; websigma used {doc['threads']} rayon threads\n"
    )
    start = machine_ticks(), own_seconds()
    g = doc["grading"]
    rows = []
    for ref in doc["cube"]:
        runs = [cube_capacitance(ref["per_edge"], g) for _ in range(RUNS)]
        c, panels = runs[0][0], runs[0][1]
        if panels != ref["panels"]:
            sys.exit(f"mesh differs from websigma's: {panels} panels against {ref['panels']}")
        asm = statistics.median(r[2] for r in runs)
        fac = statistics.median(r[3] for r in runs)
        sol = statistics.median(r[4] for r in runs)
        total = asm + fac
        ws = ref["bem_new_s"]
        c_ws = ref["capacitance_over_4pi_eps0_a"]
        rows.append(
            f"| {panels} | {asm:.3f} | {fac:.3f} | {sol * 1e3:.1f} | {total:.3f} "
            f"| {ref['assembly_s']:.3f} | {ref['lu_s']:.3f} | {ws:.3f} "
            f"| {asm / ref['closed_form_one_thread_s']:.1f}× "
            f"| {asm / ref['assembly_s']:.1f}× | {fac / ref['lu_s']:.1f}× | {total / ws:.1f}× "
            f"| {c:.7f} | {c_ws:.7f} | {abs(c - c_ws) / c_ws:.1e} | {(c - CUBE) / CUBE:+.2e} |"
        )
    print(
        "| panels | numpy assembly [s] | lu_factor [s] | lu_solve [ms] | numpy total [s] "
        "| websigma assembly [s] | websigma LU [s] | websigma Bem::new [s] "
        "| numpy assembly / websigma closed form on 1 thread "
        "| assembly ratio | LU ratio | total ratio numpy / websigma "
        "| numpy C/(4πε₀a) | websigma C/(4πε₀a) | \\|ΔC\\|/C | numpy error vs 0.6606785 |"
    )
    print("| ---: " * 16 + "|")
    for r in rows:
        print(r)
    (m0, o0), m1, o1 = start, machine_ticks(), own_seconds()
    if m0 and m1:
        tick = os.sysconf("SC_CLK_TCK")
        total = max(m1[1] - m0[1], 1)
        others = max((m1[0] - m0[0]) - (o1 - o0) * tick, 0)
        print(f"\nother processes used {ncpu * others / total:.2f} of {ncpu} cores on average during the run")


if __name__ == "__main__":
    main()
