#!/usr/bin/python3
"""Orthogonal Procrustes rotations and principal angles by scipy, for the alignment tests.

Run from this folder after make_harman74.R:  /usr/bin/python3 make_procrustes.py
Reads harman74_factanal_k4.csv, writes procrustes_reference.csv.

Each case is a pair of matrices A, B with the same number of rows. For the cases with the
same shape the file holds scipy.linalg.orthogonal_procrustes(A, B): the orthogonal R
minimising ||A R - B||_F, and its `scale` (the sum of the singular values of A' B). For
every case it holds scipy.linalg.subspace_angles(A, B), in the order scipy returns them:
DESCENDING (largest angle first), radians.

The planted cases take B = A Q (+ noise) for a random orthogonal Q from a seeded numpy
generator; Q is stored too, for reference only (with noise, R is close to Q, not equal).

A note on scipy 1.10.1's subspace_angles (read from its source): it chooses per angle
between arccos(cosine) and arcsin(sine) with a mask computed on the cosines in
descending order, while the angles it returns are in descending order of angle, i.e. the
reverse. When small and large angles are mixed an angle may get the formula that is less
accurate for it (arccos for a tiny angle, arcsin near 90 degrees). The script therefore
recomputes every angle independently (orthonormal bases by numpy QR, each angle by the
formula suited to its size) and stops if the two disagree by more than 1e-12; the largest
disagreement is written in the header.
"""
import datetime
import sys

import numpy as np
import scipy
from scipy.linalg import orthogonal_procrustes, subspace_angles

HARMAN = "harman74_factanal_k4.csv"
OUT = "procrustes_reference.csv"
SEED = 20261210
ANGLE_LIMIT = 1e-12


def data_lines(path):
    with open(path, encoding="utf-8") as f:
        return [line.rstrip("\n") for line in f if not line.startswith("#")]


def harman74_k4_loadings():
    lines = data_lines(HARMAN)
    header = lines[0].split(",")
    cols = [header.index(f"f{j}") for j in range(1, 5)]
    return np.array([[float(line.split(",")[c]) for c in cols] for line in lines[1:]])


def random_orthogonal(rng, k, det_sign):
    # QR of a Gaussian matrix with R's diagonal made positive gives a Haar-distributed Q
    # (Mezzadri 2007); flipping the first column then sets the determinant's sign.
    q, r = np.linalg.qr(rng.standard_normal((k, k)))
    q = q * np.sign(np.diag(r))
    if np.sign(np.linalg.det(q)) != det_sign:
        q[:, 0] = -q[:, 0]
    return q


def independent_angles(a, b):
    """Principal angles, ascending, each from the formula accurate for its size."""
    qa, _ = np.linalg.qr(a)
    qb, _ = np.linalg.qr(b)
    if qa.shape[1] < qb.shape[1]:
        qa, qb = qb, qa
    c = qa.T @ qb
    cosines = np.linalg.svd(c, compute_uv=False)  # descending: angles ascending
    sines = np.linalg.svd(qb - qa @ c, compute_uv=False)[::-1]  # ascending
    return np.where(cosines**2 >= 0.5, np.arcsin(np.clip(sines, -1, 1)), np.arccos(np.clip(cosines, -1, 1)))


def cases(rng):
    harman = harman74_k4_loadings()
    out = []
    q = random_orthogonal(rng, 4, +1)
    out.append(("harman74_k4_rotated", "Harman74 factanal k = 4 loadings A; B = A Q exactly, det Q = +1",
                harman, harman @ q, q))
    q = random_orthogonal(rng, 4, +1)
    out.append(("harman74_k4_noisy", "Harman74 k = 4 loadings A; B = A Q + 0.05 N(0, 1) noise, det Q = +1",
                harman, harman @ q + 0.05 * rng.standard_normal(harman.shape), q))
    q = random_orthogonal(rng, 4, -1)
    out.append(("harman74_k4_reflected", "Harman74 k = 4 loadings A; B = A Q + 0.05 N(0, 1) noise, det Q = -1",
                harman, harman @ q + 0.05 * rng.standard_normal(harman.shape), q))
    a = 0.3 * rng.standard_normal((200, 10))
    q = random_orthogonal(rng, 10, +1)
    out.append(("seeded_200x10_noisy", "A = 0.3 N(0, 1) (200 x 10); B = A Q + 0.1 N(0, 1) noise, det Q = +1",
                a, a @ q + 0.1 * rng.standard_normal(a.shape), q))
    out.append(("seeded_50x5_unrelated", "A and B independent N(0, 1) (50 x 5): a wide spread of angles",
                rng.standard_normal((50, 5)), rng.standard_normal((50, 5)), None))
    out.append(("seeded_40x6_40x3", "A (40 x 6) and B (40 x 3) independent N(0, 1): angles only, shapes differ",
                rng.standard_normal((40, 6)), rng.standard_normal((40, 3)), None))
    return out


def matrix_rows(name, item, m):
    return [[name, item, str(i), str(j), repr(float(m[i, j]))] for i in range(m.shape[0]) for j in range(m.shape[1])]


def main():
    rng = np.random.default_rng(SEED)
    rows, notes = [], []
    worst_angle, worst_orth = 0.0, 0.0
    for name, what, a, b, q in cases(rng):
        rows += matrix_rows(name, "A", a) + matrix_rows(name, "B", b)
        if q is not None:
            rows += matrix_rows(name, "Q", q)
        note = f"{name}: {what}"
        if a.shape == b.shape:
            r, scale = orthogonal_procrustes(a, b)
            worst_orth = max(worst_orth, float(np.abs(r.T @ r - np.eye(r.shape[0])).max()))
            s = np.linalg.svd(a.T @ b, compute_uv=False)
            # U V' moves by about eps * s_1 / (s_i + s_j) for the smallest pair sum
            # (the polar factor's sensitivity): the tolerance the tests can expect.
            sensitivity = s[0] / (s[-1] + s[-2])
            note += f"; det R = {np.linalg.det(r):+.0f}, s_1 / (s_k-1 + s_k) = {sensitivity:.3g}"
            if name == "harman74_k4_reflected" and np.linalg.det(r) > 0:
                sys.exit("the reflected case did not give det R = -1")
            rows += matrix_rows(name, "R", r)
            rows.append([name, "scale", "0", "0", repr(float(scale))])
        angles = subspace_angles(a, b)
        mine = independent_angles(a, b)
        worst_angle = max(worst_angle, float(np.abs(angles[::-1] - mine).max()))
        note += f"; angles (deg) {np.array2string(np.degrees(angles), precision=3, separator=' ')}"
        rows += [[name, "angle", str(i), "0", repr(float(v))] for i, v in enumerate(angles)]
        notes.append(note)
    if worst_angle > ANGLE_LIMIT:
        sys.exit(f"scipy's subspace_angles and the independent computation differ by {worst_angle:.3e}")

    header = [
        "Orthogonal Procrustes and principal angles by scipy, for tests/alignment_test.cpp.",
        "Long format: one value per row. item A, B: the inputs (row, col); Q: the planted orthogonal",
        "matrix behind B (reference only); R: scipy.linalg.orthogonal_procrustes(A, B)[0] (k x k);",
        "scale: orthogonal_procrustes(A, B)[1] (sum of the singular values of A' B);",
        "angle: scipy.linalg.subspace_angles(A, B)[row] in radians, in scipy's order: DESCENDING.",
        f"Inputs from numpy.random.default_rng({SEED}), drawn in the order of the cases below;",
        "the Harman74 loadings are R's factanal k = 4 fit from harman74_factanal_k4.csv.",
        *notes,
        f"Checks: max |R'R - I| = {worst_orth:.2e}; scipy's angles against an independent computation",
        f"(numpy QR, each angle by arcsin below 45 degrees and arccos above): max difference {worst_angle:.2e}.",
        f"tool: Debian python3 {sys.version.split()[0]}, numpy {np.__version__}, scipy {scipy.__version__}",
        f"generated: {datetime.date.today().isoformat()} by tests/reference/make_procrustes.py",
    ]
    with open(OUT, "w", encoding="utf-8") as f:
        for line in header:
            f.write("# " + line + "\n")
        f.write("case,item,row,col,value\n")
        for row in rows:
            f.write(",".join(row) + "\n")


if __name__ == "__main__":
    main()
