#!/usr/bin/python3
"""Reference medians for the scanner's background grey (pipeline.medianGrey),
computed with numpy.median (Debian python3-numpy 1.24.2).

Run:  /usr/bin/python3 testdata/pipeline/gen_scanmedian.py
Reads the 13x17 random image of median.json (gen_center.py) and writes
scan_median.json: numpy.median of half-open rectangles [x0, y0, x1, y1) of it,
each of an odd pixel count so the median is one of the pixels.
"""
import json, os
import numpy as np

here = os.path.dirname(os.path.abspath(__file__))
src = json.load(open(os.path.join(here, "median.json")))
img = np.array(src["in"], np.float32).reshape(src["h"], src["w"])
rects = [[0, 0, 17, 13], [2, 3, 9, 8], [5, 0, 16, 13], [0, 4, 17, 5], [1, 1, 4, 4]]
cases = []
for x0, y0, x1, y1 in rects:
    sub = img[y0:y1, x0:x1]
    assert sub.size % 2 == 1
    cases.append({"rect": [x0, y0, x1, y1], "median": float(np.median(sub))})
with open(os.path.join(here, "scan_median.json"), "w") as f:
    json.dump({"source": "numpy.median, numpy %s, on median.json's image" % np.__version__, "cases": cases}, f)
