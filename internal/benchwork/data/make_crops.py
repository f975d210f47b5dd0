#!/usr/bin/python3
"""Writes crops256_8x8.png and crops256.json, the 64 crops of 256×256 that
`striate bench` times the front end on.

Made with Debian 12's python3-numpy 1.24.2 and python3-pil 9.4.0:

    /usr/bin/python3 internal/benchwork/data/make_crops.py REF

REF is the shared reference folder whose data/crops256_8x8.png and
data/crops256.json the peers were timed on. Its crops come from eleven
scikit-image 0.19.3 sample photographs; two of them (motorcycle_left and
motorcycle_right, Middlebury 2014 stereo) carry no stated licence, so their
11 tiles are replaced here by crops of the nine CC0 / public-domain
photographs that package datasets embeds (datasets/photos/), cut by the
reference's own rule with a second seed: the k-th replaced tile takes
photo CLEAR[k % 9] and y0 = rng.integers(0, H-255), x0 = rng.integers(0,
W-255) with rng = numpy.random.default_rng(2). The 53 other tiles are
copied from the reference PNG, and the script first checks that each equals
the stated crop of the embedded photo, byte for byte.
"""
import json
import os
import sys

import numpy as np
from PIL import Image

HERE = os.path.dirname(os.path.abspath(__file__))
PHOTOS = os.path.join(HERE, "..", "..", "..", "datasets", "photos")
CLEAR = ["camera", "astronaut", "coffee", "chelsea", "grass", "gravel", "brick", "rocket", "hubble_deep_field"]
S = 256


def photo(name):
    return np.asarray(Image.open(os.path.join(PHOTOS, name + ".png")).convert("L"))


def main(ref):
    big = np.asarray(Image.open(os.path.join(ref, "data", "crops256_8x8.png")))
    assert big.shape == (2048, 2048) and big.dtype == np.uint8, big.shape
    doc = json.load(open(os.path.join(ref, "data", "crops256.json")))
    out = big.copy()
    rng = np.random.default_rng(2)
    crops, k = [], 0
    for c in doc["crops"]:
        i = c["i"]
        ty, tx = (i // 8) * S, (i % 8) * S
        stem = os.path.splitext(c["image"])[0]
        if stem in CLEAR:
            p = photo(stem)
            want = p[c["y0"]:c["y0"] + S, c["x0"]:c["x0"] + S]
            if not np.array_equal(big[ty:ty + S, tx:tx + S], want):
                sys.exit("tile %d differs from %s at (%d,%d)" % (i, stem, c["y0"], c["x0"]))
            crops.append({"i": i, "image": stem + ".png", "y0": c["y0"], "x0": c["x0"], "from": "reference"})
            continue
        stem = CLEAR[k % len(CLEAR)]
        k += 1
        p = photo(stem)
        h, w = p.shape
        y0 = int(rng.integers(0, h - 255))
        x0 = int(rng.integers(0, w - 255))
        out[ty:ty + S, tx:tx + S] = p[y0:y0 + S, x0:x0 + S]
        crops.append({"i": i, "image": stem + ".png", "y0": y0, "x0": x0, "from": "replacement for " + c["image"]})
    Image.fromarray(out, mode="L").save(os.path.join(HERE, "crops256_8x8.png"), optimize=True)
    meta = {
        "size": S,
        "layout": "crop i at tile row i/8, column i%8 of the 2048x2048 PNG",
        "reference_rule": doc["rule"] + " (seed %d, %s)" % (doc["seed"], doc["rng"]),
        "replacement_rule": "k-th replaced tile: image = CLEAR[k % 9]; y0 = rng.integers(0, H-255); x0 = rng.integers(0, W-255); rng = numpy.random.default_rng(2)",
        "clear": [s + ".png" for s in CLEAR],
        "photos": "datasets/photos/ (scikit-image 0.19.3 samples, CC0 or public domain; see datasets/photos/README.md)",
        "crops": crops,
    }
    with open(os.path.join(HERE, "crops256.json"), "w") as f:
        json.dump(meta, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else os.path.join(HERE, "..", "..", "..", "..", "shared", "bench"))
