#!/usr/bin/python3
"""Reference values for package eval's tests.

Run with Debian's interpreter (not a pyenv one):

    /usr/bin/python3 testdata/eval/gen_reference.py

Libraries (Debian bookworm packages): NumPy 1.24.2, SciPy 1.10.1, scikit-learn 1.2.1.
Writes, beside this script:
  predictions.json  a seeded synthetic prediction file: labels + float32 class probabilities
  sklearn.json      scikit-learn 1.2.1 confusion_matrix, classification_report(output_dict=True),
                    log_loss and top_k_accuracy_score on predictions.json
  scipy.json        SciPy 1.10.1 binomtest(k, n).proportion_ci(0.95, method='wilson') and
                    binomtest(b, b + c, 0.5).pvalue (two-sided) on fixed cases
"""
import json
import os

import numpy as np
import scipy
import sklearn
from scipy.stats import binomtest
from sklearn.metrics import classification_report, confusion_matrix, log_loss, top_k_accuracy_score

HERE = os.path.dirname(os.path.abspath(__file__))


def predictions():
    rng = np.random.default_rng(20261201)
    classes = ["tshirt", "trouser", "pullover", "dress", "coat", "sandal"]
    k = len(classes)
    n = 300
    # Imbalanced labels; the last class is rare and pushed down so that it is
    # (almost surely) never predicted: precision 0 by scikit-learn's zero_division rule.
    p = np.array([0.25, 0.2, 0.2, 0.15, 0.19, 0.01])
    labels = rng.choice(k, size=n, p=p)
    logits = rng.normal(size=(n, k)) * 1.2
    logits[np.arange(n), labels] += 1.5
    logits[:, 5] -= 6.0
    e = np.exp(logits - logits.max(axis=1, keepdims=True))
    probs = (e / e.sum(axis=1, keepdims=True)).astype(np.float32)
    return classes, labels.astype(int), probs


def main():
    classes, labels, probs = predictions()
    k = len(classes)
    # float(np.float32) is the exact float64 value of the float32; repr gives
    # the shortest string that round-trips, so Go's float32 parse is exact.
    with open(os.path.join(HERE, "predictions.json"), "w") as f:
        json.dump({
            "generator": "testdata/eval/gen_reference.py (NumPy %s, default_rng(20261201))" % np.__version__,
            "classes": classes,
            "labels": labels.tolist(),
            "probs": [[float(v) for v in row] for row in probs],
        }, f, indent=None)
        f.write("\n")

    p64 = probs.astype(np.float64)
    pred = p64.argmax(axis=1)
    rep = classification_report(labels, pred, labels=list(range(k)), target_names=classes,
                                output_dict=True, zero_division=0)
    out = {
        "source": "scikit-learn %s via testdata/eval/gen_reference.py" % sklearn.__version__,
        "confusion": confusion_matrix(labels, pred, labels=list(range(k))).tolist(),
        "report": rep,
        "log_loss": log_loss(labels, p64, labels=list(range(k))),
        "top_k": {str(t): top_k_accuracy_score(labels, p64, k=t, labels=list(range(k))) for t in (1, 2, 3)},
    }
    with open(os.path.join(HERE, "sklearn.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")

    wilson = []
    for kk, n in [(0, 10), (1, 10), (5, 10), (10, 10), (7, 9), (81, 100), (853, 1000),
                  (9012, 10000), (9999, 10000), (1, 1), (0, 1), (37, 60000), (59963, 60000)]:
        ci = binomtest(kk, n).proportion_ci(confidence_level=0.95, method="wilson")
        wilson.append({"k": kk, "n": n, "lo": ci.low, "hi": ci.high})
    mcnemar = []
    for b, c in [(0, 1), (1, 0), (3, 3), (5, 12), (12, 5), (0, 10), (20, 41), (100, 130),
                 (250, 251), (400, 550), (2, 300), (1000, 1100)]:
        mcnemar.append({"b": b, "c": c, "p": binomtest(b, b + c, 0.5).pvalue})
    with open(os.path.join(HERE, "scipy.json"), "w") as f:
        json.dump({"source": "SciPy %s scipy.stats.binomtest via testdata/eval/gen_reference.py" % scipy.__version__,
                   "wilson95": wilson, "mcnemar_exact": mcnemar}, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
