#!/usr/bin/env python3
"""Best-of-10 k-means inertia from scikit-learn on kgauge's reference point sets.

Usage:
    python3 make_inertia.py [--out DIR]

For every set in testdata/refsets named below and every k in its range it records
KMeans(n_clusters=k, n_init=10, random_state=0).fit(X).inertia_ (greedy k-means++ seeding,
Lloyd iterations, the best of 10 runs kept) into DIR/inertia.json (default: this directory).
criteria/fits_test.go checks that the fit kgauge scores at each k is within 1% of it.
"""
import argparse
import json
import os
import sys

import numpy as np
import sklearn
from sklearn.cluster import KMeans

HERE = os.path.dirname(os.path.abspath(__file__))
REFSETS = os.path.join(HERE, "..", "refsets")

SETS = {
    # name: (file in testdata/refsets, largest k)
    "s1": ("s1.txt", 20),
    "s2": ("s2.txt", 20),
    "s3": ("s3.txt", 20),
    "s4": ("s4.txt", 20),
    "a1": ("a1.txt", 25),
}


def load(path):
    # Fränti's format: a header line "n d 0", then whitespace-separated integers.
    return np.loadtxt(path, skiprows=1, ndmin=2).astype(float)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default=HERE)
    a = ap.parse_args()
    out = {"versions": {"sklearn": sklearn.__version__, "numpy": np.__version__}, "sets": {}}
    for name, (fname, kmax) in SETS.items():
        x = load(os.path.join(REFSETS, fname))
        inertia = {}
        for k in range(1, kmax + 1):
            km = KMeans(n_clusters=k, n_init=10, random_state=0).fit(x)
            inertia[str(k)] = float(km.inertia_)
        out["sets"][name] = {"file": fname, "n": int(x.shape[0]), "d": int(x.shape[1]), "inertia": inertia}
    os.makedirs(a.out, exist_ok=True)
    with open(os.path.join(a.out, "inertia.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
