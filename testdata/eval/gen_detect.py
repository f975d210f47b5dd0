#!/usr/bin/python3
"""Reference scene-detection scores for package eval (ScoreScenes, IoU, VOCAP, StepAP).

Run with Debian's interpreter from the repository root:

    /usr/bin/python3 testdata/eval/gen_detect.py

Libraries (Debian bookworm packages): NumPy 1.24.2, scikit-learn 1.2.1 (printed
and written into the output's "generator" field). Writes detect.json beside
this script:

  frames     60 seeded synthetic frames over 4 classes: integer ground-truth boxes
             [x0, y0, x1, y1) (half-open) in a 120x120 frame, 0-4 items (some frames
             empty), and detections: jittered copies of most items (some with the
             wrong class, some duplicated, some jittered below IoU 0.5) and false
             boxes, each with a distinct float64 score.
  iou        box pairs and their IoU by the PASCAL VOC devkit formula (inclusive
             pixel boxes with "+1"; our half-open [x0, x1) is the devkit's [x0, x1-1]).
  per_class  for each class, with the devkit's matching (VOCevaldet: detections of the
             class ranked by score; each takes the ground truth of its class in its
             frame with the largest IoU, if that IoU >= 0.5 and it is not yet taken,
             else it is a false positive):
               npos, ntp, tp (flags in rank order),
               voc_ap      all-point interpolated AP, the VOC2010 devkit's VOCap,
                           implemented here in NumPy;
               sklearn_ap  sklearn.metrics.average_precision_score(tp, scores) on the
                           ranked detections (non-interpolated, recall over the ranked
                           positives only; null when no detection is a true positive);
               step_ap     sklearn_ap * ntp / npos, the non-interpolated AP over all
                           ground truth.
  totals     precision and recall of the pooled class-aware matches, mAP, count
             accuracy, class-agnostic matching (same rule, classes ignored) with the
             fraction of located items given their right class, false detections per
             empty frame: plain NumPy.
"""
import json
import os

import numpy as np
import sklearn
from sklearn.metrics import average_precision_score

HERE = os.path.dirname(os.path.abspath(__file__))
K = 4
SIZE = 120
RNG = np.random.default_rng(20261203)


def frames():
    out = []
    for f in range(60):
        n = int(RNG.choice([0, 1, 2, 3, 4], p=[0.15, 0.25, 0.25, 0.2, 0.15]))
        truth, found = [], []
        for _ in range(n):
            w, h = int(RNG.integers(18, 46)), int(RNG.integers(18, 46))
            x0, y0 = int(RNG.integers(0, SIZE - w + 1)), int(RNG.integers(0, SIZE - h + 1))
            c = int(RNG.integers(0, K))
            truth.append({"box": [x0, y0, x0 + w, y0 + h], "class": c})
            if RNG.random() < 0.85:
                j = RNG.normal(0, 0.12 if RNG.random() < 0.85 else 0.45, size=4) * [w, h, w, h]
                b = np.array([x0, y0, x0 + w, y0 + h], float) + j
                b = np.round(b, 1)
                if b[2] - b[0] < 2 or b[3] - b[1] < 2:
                    b = np.array([x0, y0, x0 + w, y0 + h], float)
                dc = c if RNG.random() < 0.85 else int((c + RNG.integers(1, K)) % K)
                found.append({"box": b.tolist(), "class": dc, "score": float(RNG.beta(5, 2))})
                if RNG.random() < 0.1:
                    b2 = np.round(b + RNG.normal(0, 1.0, size=4), 1)
                    found.append({"box": b2.tolist(), "class": dc, "score": float(RNG.beta(3, 3))})
        for _ in range(int(RNG.poisson(0.6))):
            w, h = float(RNG.integers(10, 40)), float(RNG.integers(10, 40))
            x0, y0 = float(RNG.integers(0, SIZE - 40)), float(RNG.integers(0, SIZE - 40))
            found.append({"box": [x0, y0, x0 + w, y0 + h], "class": int(RNG.integers(0, K)), "score": float(RNG.beta(2, 5))})
        RNG.shuffle(found)
        out.append({"truth": truth, "found": found})
    return out


def devkit_iou(a, b):
    """IoU of half-open boxes by the VOC devkit's inclusive formula."""
    a = [a[0], a[1], a[2] - 1, a[3] - 1]
    b = [b[0], b[1], b[2] - 1, b[3] - 1]
    bi = [max(a[0], b[0]), max(a[1], b[1]), min(a[2], b[2]), min(a[3], b[3])]
    iw, ih = bi[2] - bi[0] + 1, bi[3] - bi[1] + 1
    if iw <= 0 or ih <= 0:
        return 0.0
    ua = (a[2] - a[0] + 1) * (a[3] - a[1] + 1) + (b[2] - b[0] + 1) * (b[3] - b[1] + 1) - iw * ih
    return iw * ih / ua


def voc_ap(rec, prec):
    """VOC2010 devkit VOCap: all-point interpolated AP."""
    mrec = np.concatenate([[0.0], rec, [1.0]])
    mpre = np.concatenate([[0.0], prec, [0.0]])
    for i in range(len(mpre) - 2, -1, -1):
        mpre[i] = max(mpre[i], mpre[i + 1])
    i = np.nonzero(mrec[1:] != mrec[:-1])[0] + 1
    return float(np.sum((mrec[i] - mrec[i - 1]) * mpre[i]))


def match(fr, dets, same_class):
    """Devkit greedy matching; dets = [(frame, index)] in rank order. Returns taken gt index or -1."""
    taken = [np.zeros(len(f["truth"]), bool) for f in fr]
    out = []
    for f, i in dets:
        d = fr[f]["found"][i]
        ovmax, jmax = -np.inf, -1
        for j, g in enumerate(fr[f]["truth"]):
            if same_class and g["class"] != d["class"]:
                continue
            ov = devkit_iou(d["box"], g["box"])
            if ov > ovmax:
                ovmax, jmax = ov, j
        if jmax >= 0 and ovmax >= 0.5 and not taken[f][jmax]:
            taken[f][jmax] = True
            out.append(jmax)
        else:
            out.append(-1)
    return out


def ranked(fr, keep):
    dets = [(f, i) for f in range(len(fr)) for i, d in enumerate(fr[f]["found"]) if keep(d)]
    scores = np.array([fr[f]["found"][i]["score"] for f, i in dets])
    order = np.argsort(-scores, kind="stable")
    return [dets[k] for k in order], scores[order]


def main():
    fr = frames()
    per_class = []
    ntp_all = 0
    for c in range(K):
        dets, scores = ranked(fr, lambda d: d["class"] == c)
        assert len(set(scores.tolist())) == len(scores), "scores must be distinct"
        m = match(fr, dets, True)
        tp = np.array([j >= 0 for j in m])
        npos = sum(g["class"] == c for f in fr for g in f["truth"])
        ctp = np.cumsum(tp)
        rec = ctp / npos
        prec = ctp / np.arange(1, len(tp) + 1)
        ntp = int(tp.sum())
        ntp_all += ntp
        sk = float(average_precision_score(tp.astype(int), scores)) if ntp > 0 else None
        per_class.append({"npos": int(npos), "ntp": ntp, "found": len(dets), "tp": tp.tolist(),
                          "scores": scores.tolist(), "recall": rec.tolist(), "precision": prec.tolist(),
                          "voc_ap": voc_ap(rec, prec), "sklearn_ap": sk,
                          "step_ap": (sk * ntp / npos) if sk is not None else 0.0})
    truth = sum(len(f["truth"]) for f in fr)
    found = sum(len(f["found"]) for f in fr)
    dets, _ = ranked(fr, lambda d: True)
    m = match(fr, dets, False)
    located = sum(j >= 0 for j in m)
    right = sum(j >= 0 and fr[f]["truth"][j]["class"] == fr[f]["found"][i]["class"] for (f, i), j in zip(dets, m))
    empty = [f for f in fr if not f["truth"]]
    totals = {
        "truth": truth, "found": found, "matched": ntp_all,
        "precision": ntp_all / found, "recall": ntp_all / truth,
        "map": float(np.mean([p["voc_ap"] for p in per_class])),
        "count_right": sum(len(f["found"]) == len(f["truth"]) for f in fr),
        "count_accuracy": sum(len(f["found"]) == len(f["truth"]) for f in fr) / len(fr),
        "located": int(located), "located_right": int(right), "recognition_accuracy": right / located,
        "empty_frames": len(empty), "false_on_empty": sum(len(f["found"]) for f in empty),
        "false_per_empty": sum(len(f["found"]) for f in empty) / len(empty),
    }
    pairs = []
    for _ in range(12):
        a = np.round(RNG.uniform(0, 60, 2), 1).tolist()
        a += [a[0] + float(np.round(RNG.uniform(1, 40), 1)), a[1] + float(np.round(RNG.uniform(1, 40), 1))]
        b = [float(np.round(v + RNG.normal(0, 8), 1)) for v in a]
        if b[2] <= b[0] or b[3] <= b[1]:
            b = a
        pairs.append({"a": a, "b": b, "iou": devkit_iou(a, b)})
    gen = "gen_detect.py: NumPy %s, scikit-learn %s" % (np.__version__, sklearn.__version__)
    with open(os.path.join(HERE, "detect.json"), "w") as f:
        json.dump({"generator": gen, "classes": K, "frames": fr, "iou": pairs,
                   "per_class": per_class, "totals": totals}, f)
        f.write("\n")
    print(gen)
    print(json.dumps(totals))
    print([(p["voc_ap"], p["step_ap"]) for p in per_class])


if __name__ == "__main__":
    main()
