#!/usr/bin/python3
"""Reference sparse codes for learn's FISTA and CD tests.

Generated with Debian's scikit-learn 1.2.1, NumPy 1.24.2, scikit-image 0.19.3
(/usr/bin/python3). Run from this directory:  /usr/bin/python3 gen_lasso.py

Objective per signal: 0.5*||x - D^T a||^2 + lam*||a||_1 with unit-norm atoms
(rows of D). scikit-learn's Lasso minimises (1/(2*n_samples))*||y - Xw||^2 +
alpha*||w||_1; with X = D^T (n_samples = dim rows) the two agree when
alpha = lam/dim, which is also what SparseCoder(transform_algorithm='lasso_cd')
does internally. Both are run and must agree.

Problems (all values rounded to float32 before solving, so Go sees the same data):
  random:   Gaussian dictionary, 128 atoms of dimension 64, 24 signals
            x = D^T a_true + noise with 8-sparse a_true.
  natural:  64 atoms of dimension 64 learned by MiniBatchDictionaryLearning from
            8x8 whitened patches of skimage.data.camera(), coding 24 held-out patches.
Each problem has signed codes (lam as stored) and non-negative codes (positive=True).
"""
import json
import numpy as np
import sklearn
import skimage
from skimage import data
from sklearn.linear_model import Lasso
from sklearn.decomposition import SparseCoder, MiniBatchDictionaryLearning

def f32(a):
    return np.asarray(a, dtype=np.float32).astype(np.float64)

def unit_rows(d):
    d = d / np.linalg.norm(d, axis=1, keepdims=True)
    d = f32(d)
    return d / np.linalg.norm(d, axis=1, keepdims=True)

def solve(D, X, lam, positive):
    dim = D.shape[1]
    codes = []
    for x in X:
        m = Lasso(alpha=lam / dim, fit_intercept=False, tol=1e-14, max_iter=1000000,
                  positive=positive, selection='cyclic')
        m.fit(D.T, x)
        codes.append(m.coef_)
    codes = np.array(codes)
    sc = SparseCoder(dictionary=D, transform_algorithm='lasso_cd', transform_alpha=lam,
                     transform_max_iter=1000000, positive_code=positive)
    # SparseCoder stops at Lasso's default tol (1e-4 on the duality gap), so it
    # agrees only loosely in codes but closely in objective; a wrong alpha
    # mapping would miss both by orders of magnitude.
    c2 = sc.transform(X)
    objf = lambda c: 0.5 * np.sum((X - c @ D) ** 2, axis=1) + lam * np.sum(np.abs(c), axis=1)
    obj = objf(codes)
    assert np.max(np.abs(c2 - codes)) < 1e-2, np.max(np.abs(c2 - codes))
    assert np.max(np.abs(objf(c2) - obj) / obj) < 1e-5, np.max(np.abs(objf(c2) - obj) / obj)
    return codes, obj

def problem(name, D, X, lam):
    out = {"name": name, "atoms": D.shape[0], "dim": D.shape[1], "n": X.shape[0], "lambda": lam,
           "D": D.ravel().tolist(), "X": X.ravel().tolist()}
    for tag, pos in (("signed", False), ("nonneg", True)):
        codes, obj = solve(D, X, lam, pos)
        out["codes_" + tag] = codes.ravel().tolist()
        out["objective_" + tag] = obj.tolist()
    return out

rng = np.random.RandomState(20090101)
# random problem
k, dim, n = 128, 64, 24
D = unit_rows(rng.randn(k, dim))
A = np.zeros((n, k))
for i in range(n):
    idx = rng.choice(k, 8, replace=False)
    A[i, idx] = rng.randn(8) * 2
X = f32(A @ D + 0.1 * rng.randn(n, dim))
probs = [problem("random", D, X, 0.5)]

# natural-patch problem
img = data.camera().astype(np.float64) / 255
P = []
for _ in range(6000):
    y, x = rng.randint(0, img.shape[0] - 8), rng.randint(0, img.shape[1] - 8)
    P.append(img[y:y + 8, x:x + 8].ravel())
P = np.array(P)
P -= P.mean(axis=1, keepdims=True)
mu = P[:5000].mean(axis=0)
P -= mu
C = P[:5000].T @ P[:5000] / 5000
ev, U = np.linalg.eigh(C)
W = U @ np.diag(1 / np.sqrt(ev + 1e-3)) @ U.T
P = P @ W.T
dl = MiniBatchDictionaryLearning(n_components=64, alpha=1.0, batch_size=256, max_iter=3,
                                 random_state=0, fit_algorithm='cd')
dl.fit(P[:5000])
D = unit_rows(dl.components_)
X = f32(P[5000:5024])
probs.append(problem("natural", D, X, 1.0))

meta = {"generator": "gen_lasso.py",
        "library": "scikit-learn %s (Debian python3-sklearn), numpy %s, scikit-image %s"
                   % (sklearn.__version__, np.__version__, skimage.__version__),
        "solver": "Lasso(alpha=lam/dim, fit_intercept=False, tol=1e-14, max_iter=1e6), float64; "
                  "cross-checked against SparseCoder(transform_algorithm='lasso_cd', transform_alpha=lam)",
        "problems": probs}
with open("lasso_ref.json", "w") as fh:
    json.dump(meta, fh)
print("wrote lasso_ref.json", [(p["name"], p["atoms"], p["dim"], p["n"]) for p in probs])
