#!/usr/bin/env python3
"""Reference values for kgauge's criteria tests, computed with scikit-learn and SciPy.

Usage:
    python3 make_reference.py [--out DIR] [--write-mixtures]

Reads the point sets committed beside this script (ruspini.csv and the seeded mixtures
mix3_2d.csv, mix5_4d.csv, corr3_5d.csv) and writes reference.json into DIR (default: this directory).
--write-mixtures regenerates the mixture CSVs with numpy's seeded default_rng first.

For every point set and k it records:
  * labels of sklearn KMeans(n_clusters=k, n_init=10, random_state=0) and its inertia_;
  * silhouette_score, calinski_harabasz_score, davies_bouldin_score on those labels;
  * a GaussianMixture(covariance_type="diag", reg_covar=1e-6, tol=1e-10, max_iter=5000) fit
    started from the KMeans labels (weights_init = cluster shares, means_init = cluster means,
    precisions_init = 1 / (within-cluster variance + 1e-6)): weights_, means_, covariances_,
    score_samples(X).sum(), bic(X), aic(X), n_iter_;
  * the same for GaussianMixture(covariance_type="full") from the same start (covariances =
    within-cluster covariances + 1e-6 I): weights_, means_, covariances_, loglik, bic, aic, and
    the entropy of predict_proba(X) (the term ICL adds to BIC);
  * the same for GaussianMixture(covariance_type="spherical") from the same start (one variance
    per component: the mean of its within-cluster variances + 1e-6): weights_, means_,
    covariances_, loglik, bic, aic and the entropy of predict_proba(X);
  * scipy.cluster.hierarchy.linkage(X, method="ward") merge heights (column 2).
"""
import argparse
import json
import os
import sys

import numpy as np
import scipy
import sklearn
from scipy.cluster.hierarchy import linkage
from sklearn.cluster import KMeans
from sklearn.metrics import calinski_harabasz_score, davies_bouldin_score, silhouette_score
from sklearn.mixture import GaussianMixture

HERE = os.path.dirname(os.path.abspath(__file__))

SETS = {
    # name: (file, list of k)
    "ruspini": ("ruspini.csv", [1, 2, 3, 4, 5, 6]),
    "mix3_2d": ("mix3_2d.csv", [1, 2, 3, 4, 5]),
    "mix5_4d": ("mix5_4d.csv", [1, 2, 3, 5, 7]),
    "corr3_5d": ("corr3_5d.csv", [1, 2, 3, 4, 6]),
}


def write_mixtures():
    # Invented test data (seeded): 3 Gaussian clusters in 2-D, 150 points.
    rng = np.random.default_rng(20240601)
    centres = np.array([[0.0, 0.0], [6.0, 1.0], [2.0, 7.0]])
    x = np.vstack([c + rng.normal(size=(50, 2)) for c in centres])
    np.savetxt(os.path.join(HERE, "mix3_2d.csv"), x, delimiter=",", fmt="%.17g")
    # 5 clusters in 4-D with unequal sizes and per-dimension scales, 300 points.
    rng = np.random.default_rng(20240602)
    sizes = [100, 80, 60, 40, 20]
    scale = np.array([1.0, 0.5, 2.0, 1.5])
    x = np.vstack([rng.normal(scale=8.0, size=4) + scale * rng.normal(size=(n, 4)) for n in sizes])
    np.savetxt(os.path.join(HERE, "mix5_4d.csv"), x, delimiter=",", fmt="%.17g")
    # 3 elongated, correlated Gaussian clusters in 5-D (random covariances A A^T with one long
    # axis), sizes 200, 150, 100: 450 points.
    rng = np.random.default_rng(20261202)
    parts = []
    for n, c in zip([200, 150, 100], [0.0, 6.0, -6.0]):
        a = rng.normal(size=(5, 5)) * 0.5
        a[:, 0] *= 6.0
        parts.append(c + rng.normal(size=(n, 5)) @ a.T)
    x = np.vstack(parts)
    np.savetxt(os.path.join(HERE, "corr3_5d.csv"), x, delimiter=",", fmt="%.17g")


def mixture_record(g, x, cov_key, entropy=True):
    """The fitted mixture g on x: weights_, means_, covariances_ (under cov_key), the log-likelihood
    score_samples(x).sum(), bic, aic, n_iter_ and, with entropy, the entropy of the soft
    classification -sum_i sum_j t_ij ln t_ij (0 ln 0 = 0), the term ICL adds to BIC twice
    (Biernacki, Celeux & Govaert 2000)."""
    rec = {
        "weights": g.weights_.tolist(),
        "means": g.means_.ravel().tolist(),
        cov_key: g.covariances_.ravel().tolist(),
        "loglik": float(g.score_samples(x).sum()),
        "bic": float(g.bic(x)),
        "aic": float(g.aic(x)),
        "n_iter": int(g.n_iter_),
    }
    if entropy:
        rec["entropy"] = float(-sum(t * np.log(t) for t in g.predict_proba(x).ravel() if t > 0))
    return rec


def load(path):
    return np.loadtxt(path, delimiter=",", ndmin=2)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default=HERE)
    ap.add_argument("--write-mixtures", action="store_true")
    a = ap.parse_args()
    if a.write_mixtures:
        write_mixtures()
    out = {
        "versions": {"sklearn": sklearn.__version__, "scipy": scipy.__version__, "numpy": np.__version__},
        "sets": {},
    }
    for name, (fname, ks) in SETS.items():
        x = load(os.path.join(HERE, fname))
        rec = {"file": fname, "n": int(x.shape[0]), "d": int(x.shape[1]), "per_k": {}}
        for k in ks:
            km = KMeans(n_clusters=k, n_init=10, random_state=0).fit(x)
            r = {"labels": km.labels_.tolist(), "inertia": float(km.inertia_)}
            if k >= 2:
                r["silhouette"] = float(silhouette_score(x, km.labels_))
                r["calinski_harabasz"] = float(calinski_harabasz_score(x, km.labels_))
                r["davies_bouldin"] = float(davies_bouldin_score(x, km.labels_))
            # Fixed EM start from the KMeans labels: weights = cluster shares, means = cluster
            # means, variances = within-cluster variances (ddof 0) + reg_covar.
            lab = km.labels_
            w0 = np.array([np.mean(lab == j) for j in range(k)])
            m0 = np.array([x[lab == j].mean(axis=0) for j in range(k)])
            v0 = np.array([((x[lab == j] - m0[j]) ** 2).mean(axis=0) for j in range(k)]) + 1e-6
            gm = GaussianMixture(n_components=k, covariance_type="diag", reg_covar=1e-6, tol=1e-10,
                                 max_iter=5000, weights_init=w0, means_init=m0, precisions_init=1.0 / v0,
                                 random_state=0).fit(x)
            r["gmm"] = mixture_record(gm, x, "vars", entropy=False)
            # The same start for the full-covariance model: covariances = within-cluster
            # covariances (ddof 0) + reg_covar on the diagonal.
            c0 = np.array([np.cov(x[lab == j].T, bias=True).reshape(x.shape[1], x.shape[1])
                           + 1e-6 * np.eye(x.shape[1]) for j in range(k)])
            gf = GaussianMixture(n_components=k, covariance_type="full", reg_covar=1e-6, tol=1e-10,
                                 max_iter=5000, weights_init=w0, means_init=m0,
                                 precisions_init=np.linalg.inv(c0), random_state=0).fit(x)
            r["gmm_full"] = mixture_record(gf, x, "covs")
            # The same start for the spherical model: one variance per component, the mean of its
            # per-dimension variances (v0 already holds reg_covar, so the mean does too).
            gs = GaussianMixture(n_components=k, covariance_type="spherical", reg_covar=1e-6, tol=1e-10,
                                 max_iter=5000, weights_init=w0, means_init=m0,
                                 precisions_init=1.0 / v0.mean(axis=1), random_state=0).fit(x)
            r["gmm_spherical"] = mixture_record(gs, x, "vars")
            rec["per_k"][str(k)] = r
        rec["ward_heights"] = linkage(x, method="ward")[:, 2].tolist()
        out["sets"][name] = rec
    os.makedirs(a.out, exist_ok=True)
    with open(os.path.join(a.out, "reference.json"), "w") as f:
        json.dump(out, f, indent=None, separators=(",", ":"))
        f.write("\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
