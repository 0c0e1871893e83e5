#!/usr/bin/env python3
"""Cross-check `levelhead adjust` against numpy (an independent dense solution).

Builds an invented random levelling network, runs the levelhead CLI on it, and
solves the same Gauss-Markov model with numpy.linalg (dense normal matrix and
its full inverse). Compares heights, a-posteriori sigmas, w and sigma0.

usage: numpy_check.py LEVELHEAD_EXE WORK_DIR
"""
import csv
import json
import os
import subprocess
import sys

import numpy as np

MM_PER_SQRT_KM = 1.5


def make_network(rng, n_points=80, n_extra=60):
    xy = rng.uniform(0.0, 4000.0, size=(n_points, 2))
    true_h = 80.0 + rng.uniform(-15.0, 15.0, size=n_points)
    pairs = [(int(rng.integers(0, i)), i) for i in range(1, n_points)]
    for _ in range(n_extra):
        i = int(rng.integers(1, n_points))
        j = int(rng.integers(0, i))
        pairs.append((i, j))
    sections = []
    for f, t in pairs:
        length = max(10.0, float(np.hypot(*(xy[f] - xy[t]))))
        sigma = MM_PER_SQRT_KM * 1e-3 * np.sqrt(length / 1000.0)
        sections.append((f, t, true_h[t] - true_h[f] + rng.normal(0.0, sigma), length))
    fixed = {0: true_h[0], 5: true_h[5]}
    weighted = {9: (true_h[9] + rng.normal(0, 0.003), 0.003)}
    return true_h, sections, fixed, weighted


def write_tables(folder, n_points, sections, fixed, weighted):
    with open(os.path.join(folder, "points.csv"), "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "height", "sigma"])
        for i in range(n_points):
            if i in fixed:
                w.writerow([f"P{i}", repr(fixed[i]), ""])
            elif i in weighted:
                w.writerow([f"P{i}", repr(weighted[i][0]), repr(weighted[i][1])])
            else:
                w.writerow([f"P{i}", "", ""])
    with open(os.path.join(folder, "sections.csv"), "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["from", "to", "dh", "length"])
        for f, t, dh, length in sections:
            w.writerow([f"P{f}", f"P{t}", repr(dh), repr(length)])


def numpy_solution(n_points, sections, fixed, weighted):
    unknowns = [i for i in range(n_points) if i not in fixed]
    col = {p: k for k, p in enumerate(unknowns)}
    rows, obs, sig = [], [], []
    for f, t, dh, length in sections:
        a = np.zeros(len(unknowns))
        value = dh
        if t in col:
            a[col[t]] = 1.0
        else:
            value -= fixed[t]
        if f in col:
            a[col[f]] = -1.0
        else:
            value += fixed[f]
        rows.append(a)
        obs.append(value)
        sig.append(MM_PER_SQRT_KM * 1e-3 * np.sqrt(length / 1000.0))
    for p, (h, s) in weighted.items():
        a = np.zeros(len(unknowns))
        a[col[p]] = 1.0
        rows.append(a)
        obs.append(h)
        sig.append(s)
    A, l, sig = np.array(rows), np.array(obs), np.array(sig)
    P = np.diag(1.0 / sig**2)
    Q = np.linalg.inv(A.T @ P @ A)
    x = Q @ A.T @ P @ l
    v = A @ x - l
    dof = len(l) - len(unknowns)
    sigma0 = float(np.sqrt(v @ P @ v / dof))
    qvv = np.diag(np.diag(sig**2) - A @ Q @ A.T)
    w = v[: len(sections)] / np.sqrt(qvv[: len(sections)])
    height = {p: fixed[p] for p in fixed}
    sigma = {p: 0.0 for p in fixed}
    for p, k in col.items():
        height[p] = x[k]
        sigma[p] = sigma0 * np.sqrt(Q[k, k])
    return height, sigma, w, sigma0


def main():
    exe, work = sys.argv[1], sys.argv[2]
    os.makedirs(work, exist_ok=True)
    rng = np.random.default_rng(20261201)
    true_h, sections, fixed, weighted = make_network(rng)
    n_points = len(true_h)
    write_tables(work, n_points, sections, fixed, weighted)
    out = os.path.join(work, "out")
    subprocess.run([exe, "adjust", "--points", os.path.join(work, "points.csv"),
                    "--sections", os.path.join(work, "sections.csv"), "--out", out,
                    "--mm-per-sqrt-km", str(MM_PER_SQRT_KM), "--quiet"], check=True)
    height, sigma, w, sigma0 = numpy_solution(n_points, sections, fixed, weighted)

    failures = []
    with open(os.path.join(out, "heights.csv")) as fh:
        for row in csv.DictReader(fh):
            p = int(row["id"][1:])
            # heights.csv carries 5 decimals (0.01 mm): allow half a unit of
            # the last decimal plus rounding of the solve.
            if abs(float(row["height"]) - height[p]) > 0.5e-5 + 1e-9:
                failures.append(f"height {row['id']}: {row['height']} vs numpy {height[p]:.7f}")
            if abs(float(row["sigma"]) - sigma[p]) > 0.5e-5 + 1e-9:
                failures.append(f"sigma {row['id']}: {row['sigma']} vs numpy {sigma[p]:.7f}")
    with open(os.path.join(out, "residuals.csv")) as fh:
        for k, row in enumerate(csv.DictReader(fh)):
            # w carries 3 decimals.
            if row["w"] and abs(float(row["w"]) - w[k]) > 0.5e-3 + 1e-9:
                failures.append(f"w of section {k}: {row['w']} vs numpy {w[k]:.4f}")
    with open(os.path.join(out, "summary.json")) as fh:
        summary = json.load(fh)
    # summary.json has full precision: 1e-9 relative.
    if abs(summary["sigma0"] - sigma0) > 1e-9 * sigma0:
        failures.append(f"sigma0 {summary['sigma0']} vs numpy {sigma0}")
    if summary["dof"] != len(sections) + len(weighted) - (n_points - len(fixed)):
        failures.append(f"dof {summary['dof']}")

    if failures:
        print("\n".join(failures))
        print(f"0 passed, {len(failures)} failed")
        return 1
    print(f"numpy cross-check: {n_points} points, {len(sections)} sections, sigma0 {sigma0:.4f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
