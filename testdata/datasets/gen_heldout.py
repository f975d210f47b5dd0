#!/usr/bin/python3
"""Reference outputs for striate's held-out corruptions (datasets/heldout.go) from
general-purpose libraries: Pillow's BOX resize and JPEG codec, SciPy's correlation,
Gaussian filter and map_coordinates, scikit-image's adjust_gamma.

Libraries: Pillow, SciPy, scikit-image, NumPy (Debian python3-pil, python3-scipy,
python3-skimage); the versions are printed and written to the output's "generator" field.
Run from the repository root:
    /usr/bin/python3 testdata/datasets/gen_heldout.py
Writes testdata/datasets/heldout/reference.json.

Inputs: the five images of testdata/datasets/corrupt/reference.json (MNIST test images 0-2,
a 28x28 camera crop, a 21x34 coffee crop), pixel = byte/255; f = min(h, w)/28. Outputs:
  pixelate-S: bytes of Image.resize((floor(w c), floor(h c)), BOX) then .resize((w, h), BOX)
              on the 8-bit image ('L'), c of severity S
  jpeg-S:     bytes of the image saved as JPEG at quality q of severity S and read back
              (Pillow's libjpeg), plus its quantisation table (zig-zag order as Pillow gives it)
  defocus-S:  scipy.ndimage.correlate(x, K, mode='mirror'), K the disc 1[i^2 + j^2 <= (r f)^2]
              on -L..L (L = ceil(r f) + 2, so the outer two rings are 0 as on ImageNet-C's 17x17 grid) normalised to sum 1, then correlate1d along each
              axis with the 3-tap Gaussian exp(-t^2 / (2 0.5^2)), t = -1, 0, 1, normalised,
              mode='mirror'  (ImageNet-C's disk kernel and alias blur)
  elastic-S:  map_coordinates(x, (r + a v, c + a u), order=1, mode='constant', cval=0) with
              u, v = gaussian_filter(U, 4 f, mode='constant', truncate=4.0) of the fixed fields
              U_u[i] = ((7919 i + 13) mod 2001)/1000 - 1, U_v[i] = ((104729 i + 71) mod 2001)/1000 - 1
              (i the row-major pixel index), a = alpha f of severity S
  gamma-S:    skimage.exposure.adjust_gamma(x, g), g of severity S
Floats rounded to 1e-10.
"""
import io, json, math, os
import numpy as np
import PIL
from PIL import Image
import scipy, scipy.ndimage as nd
import skimage, skimage.exposure

here = os.path.dirname(os.path.abspath(__file__))
PIXELATE = [0.6, 0.5, 0.4, 0.3, 0.25]
JPEG = [25, 18, 15, 10, 7]
DEFOCUS = [1, 1.5, 2, 2.5, 3]
ALPHA = [16, 25, 34, 45, 60]
GAMMA = [1.5, 2, 3, 4, 5]

with open(os.path.join(here, "corrupt", "reference.json")) as f:
    src = json.load(f)["images"]

gen = "testdata/datasets/gen_heldout.py, Pillow %s, SciPy %s, scikit-image %s, NumPy %s" % (
    PIL.__version__, scipy.__version__, skimage.__version__, np.__version__)
print(gen)

def rnd(a):
    return [round(float(v), 10) for v in np.asarray(a, np.float64).ravel()]

def defocus_kernel(r):
    l = int(math.ceil(r)) + 2
    t = np.arange(-l, l + 1)
    yy, xx = np.meshgrid(t, t, indexing="ij")
    k = (yy ** 2 + xx ** 2 <= r * r).astype(np.float64)
    k /= k.sum()
    g = np.exp(-np.array([-1.0, 0.0, 1.0]) ** 2 / (2 * 0.5 ** 2))
    g /= g.sum()
    k = nd.correlate1d(k, g, axis=1, mode="mirror")
    return nd.correlate1d(k, g, axis=0, mode="mirror")

out = {"generator": gen, "images": {}}
for name in sorted(src):
    im = src[name]
    h, w = im["h"], im["w"]
    u8 = np.array(im["u8"], np.uint8).reshape(h, w)
    x = u8.astype(np.float64) / 255
    f = min(h, w) / 28
    res, qt = {}, {}
    pil = Image.fromarray(u8, "L")
    for s in range(5):
        c = PIXELATE[s]
        small = pil.resize((int(w * c), int(h * c)), Image.BOX)
        res["pixelate-%d" % (s + 1)] = list(np.asarray(small.resize((w, h), Image.BOX)).ravel().tolist())
        buf = io.BytesIO()
        pil.save(buf, "JPEG", quality=JPEG[s])
        buf.seek(0)
        dec = Image.open(buf)
        qt["jpeg-%d" % (s + 1)] = list(dec.quantization[0])
        res["jpeg-%d" % (s + 1)] = list(np.asarray(dec.convert("L")).ravel().tolist())
        res["defocus-%d" % (s + 1)] = rnd(nd.correlate(x, defocus_kernel(DEFOCUS[s] * f), mode="mirror"))
        i = np.arange(h * w)
        uu = (((7919 * i + 13) % 2001) / 1000 - 1).reshape(h, w)
        vv = (((104729 * i + 71) % 2001) / 1000 - 1).reshape(h, w)
        sig = 4 * f
        uu = nd.gaussian_filter(uu, sig, mode="constant", truncate=4.0)
        vv = nd.gaussian_filter(vv, sig, mode="constant", truncate=4.0)
        a = ALPHA[s] * f
        rr, cc = np.meshgrid(np.arange(h), np.arange(w), indexing="ij")
        res["elastic-%d" % (s + 1)] = rnd(nd.map_coordinates(x, [rr + a * vv, cc + a * uu], order=1,
                                                             mode="constant", cval=0.0))
        res["gamma-%d" % (s + 1)] = rnd(skimage.exposure.adjust_gamma(x, GAMMA[s]))
    out["images"][name] = {"H": h, "W": w, "Outputs": res, "JPEGTables": qt}

os.makedirs(os.path.join(here, "heldout"), exist_ok=True)
with open(os.path.join(here, "heldout", "reference.json"), "w") as f:
    json.dump(out, f, separators=(",", ":"))
print("wrote", os.path.join(here, "heldout", "reference.json"))
