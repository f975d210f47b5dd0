#!/usr/bin/python3
"""LeNet-5 peer on striate's development and held-out suites (protocol: ../shared/bench/README.md §3).

A LeNet-5-like CNN trained with PyTorch (Debian python3-torch, CPU, 2 threads) on the clean
training split, then scored on exactly the images striate is scored on: the clean test split and
every condition of a suite written by the Go side with seed datasets.SuiteSeed, either
datasets.DevelopmentSuite (15 MNIST-C corruptions x 5 severities and the six-kind grid) or, with
STRIATE_SUITE=heldout, datasets.HeldOutSuite (7 held-out kinds x 5 severities):

    STRIATE_SUITE_OUT=/tmp/suite go test -run TestWriteSuite -timeout 60m ./datasets
    STRIATE_SUITE=heldout STRIATE_SUITE_OUT=/tmp/heldout go test -run TestWriteSuite -timeout 60m ./datasets
    /usr/bin/python3 testdata/peer/lenet5.py /tmp/suite/mnist   testdata/peer/lenet5_mnist.json   /tmp/peer-weights
    /usr/bin/python3 testdata/peer/lenet5.py /tmp/heldout/mnist testdata/peer/lenet5_mnist_heldout.json /tmp/peer-weights
    (the same for fashion)

With the optional third argument, CACHE_DIR, each seed's trained weights are saved there and read
back by later runs, so both suites are scored by the same three models (and the second run trains
nothing); eval.MergePeers checks that the clean figures of the two files agree.
STRIATE_PEER_SEEDS=0,1 (say) scores fewer seeds than the protocol's three, for partial runs; the
output's "seeds" field says which.

Model: Conv(1->6, 5x5, pad 2)-ReLU-MaxPool2-Conv(6->16, 5x5)-ReLU-MaxPool2-FC(400->120)-ReLU-
FC(120->84)-ReLU-FC(84->10); input u8/255, no normalisation, no augmentation; Adam lr 1e-3,
batch 64, 10 epochs, cross-entropy; seeds 0, 1, 2 (torch.manual_seed(seed) before the model is
built, epoch shuffles from torch.Generator().manual_seed(seed)); accuracy after the last epoch,
mean of the three seeds. Not part of `go test`. The output JSON holds, per condition, the
accuracy of each seed and their mean, the means over the MNIST-C and the held-out conditions,
with the library versions and the suite's seed.
"""
import gzip, json, os, platform, sys, time

import numpy as np
import torch
import torch.nn as nn

SEEDS = tuple(int(v) for v in os.environ.get("STRIATE_PEER_SEEDS", "0,1,2").split(","))
EPOCHS = 10
BATCH = 64
LR = 1e-3


def read_idx(path):
    """Reads a plain or gzip-compressed IDX file of u8 elements."""
    with open(path, "rb") as f:
        raw = f.read()
    if raw[:2] == b"\x1f\x8b":
        raw = gzip.decompress(raw)
    if raw[0] != 0 or raw[1] != 0 or raw[2] != 0x08:
        raise ValueError("%s: not a u8 IDX file" % path)
    rank = raw[3]
    dims = [int.from_bytes(raw[4 + 4 * i:8 + 4 * i], "big") for i in range(rank)]
    data = np.frombuffer(raw, np.uint8, offset=4 + 4 * rank)
    if data.size != int(np.prod(dims)):
        raise ValueError("%s: %d elements for dims %s" % (path, data.size, dims))
    return data.reshape(dims)


def images(path):
    x = read_idx(path)
    return torch.from_numpy(x.astype(np.float32) / 255.0).unsqueeze(1)


class LeNet5(nn.Module):
    def __init__(self):
        super().__init__()
        self.features = nn.Sequential(
            nn.Conv2d(1, 6, 5, padding=2), nn.ReLU(), nn.MaxPool2d(2),
            nn.Conv2d(6, 16, 5), nn.ReLU(), nn.MaxPool2d(2))
        self.classifier = nn.Sequential(
            nn.Flatten(), nn.Linear(400, 120), nn.ReLU(), nn.Linear(120, 84), nn.ReLU(), nn.Linear(84, 10))

    def forward(self, x):
        return self.classifier(self.features(x))


def train(x, y, seed):
    torch.manual_seed(seed)
    model = LeNet5()
    opt = torch.optim.Adam(model.parameters(), lr=LR)
    loss_fn = nn.CrossEntropyLoss()
    gen = torch.Generator().manual_seed(seed)
    n = x.shape[0]
    for _ in range(EPOCHS):
        model.train()
        perm = torch.randperm(n, generator=gen)
        for i in range(0, n, BATCH):
            idx = perm[i:i + BATCH]
            opt.zero_grad()
            loss = loss_fn(model(x[idx]), y[idx])
            loss.backward()
            opt.step()
    return model


def accuracy(model, x, y):
    model.eval()
    correct = 0
    with torch.no_grad():
        for i in range(0, x.shape[0], 1000):
            correct += int((model(x[i:i + 1000]).argmax(1) == y[i:i + 1000]).sum())
    return correct / x.shape[0]


def trained(x_train, y_train, seed, cache, dataset):
    """Returns the model of one seed and its training CPU-seconds: trained here, or read from
    CACHE_DIR/<dataset>-seed<seed>.pt (written by an earlier run with the same CACHE_DIR) so the
    same three models can score a further suite without training again."""
    path = os.path.join(cache, "%s-seed%d.pt" % (dataset, seed)) if cache else None
    if path and os.path.exists(path):
        saved = torch.load(path)
        model = LeNet5()
        model.load_state_dict(saved["state"])
        return model, saved["cpu_seconds"]
    t0 = time.process_time()
    model = train(x_train, y_train, seed)
    cpu = time.process_time() - t0
    if path:
        os.makedirs(cache, exist_ok=True)
        torch.save({"state": model.state_dict(), "cpu_seconds": cpu}, path + ".tmp")
        os.replace(path + ".tmp", path)
    return model, cpu


def main():
    if len(sys.argv) not in (3, 4):
        sys.exit("usage: lenet5.py SUITE_DIR OUT.json [CACHE_DIR]  (SUITE_DIR written by TestWriteSuite)")
    src, out_path = sys.argv[1], sys.argv[2]
    cache = sys.argv[3] if len(sys.argv) == 4 else None
    torch.set_num_threads(2)
    with open(os.path.join(src, "suite.json")) as f:
        manifest = json.load(f)
    x_train = images(os.path.join(src, "train-images.idx.gz"))
    y_train = torch.from_numpy(read_idx(os.path.join(src, "train-labels.idx.gz")).astype(np.int64))
    y_test = torch.from_numpy(read_idx(os.path.join(src, "test-labels.idx.gz")).astype(np.int64))
    conditions = [{"name": "clean", "group": "clean", "file": manifest["Clean"]}]
    conditions += [{"name": c["Name"], "group": c["Group"], "kind": c["Kind"], "unit": c["Unit"],
                    "level": c["Level"], "file": c["File"]} for c in manifest["Suite"]]
    models, times = [], []
    for seed in SEEDS:
        model, cpu = trained(x_train, y_train, seed, cache, manifest["Dataset"])
        models.append(model)
        times.append(cpu)
        print("seed %d: %.0f CPU-s of training" % (seed, cpu), flush=True)
    for c in conditions:  # one condition's images in memory at a time
        x = images(os.path.join(src, c["file"]))
        if x.shape[0] != y_test.shape[0]:
            sys.exit("%s: %d images for %d labels" % (c["file"], x.shape[0], y_test.shape[0]))
        c["accuracy"] = [accuracy(m, x, y_test) for m in models]
        c["mean"] = float(np.mean(c["accuracy"]))
    print("clean: %s" % conditions[0]["accuracy"], flush=True)

    def group_mean(g):
        v = [c["mean"] for c in conditions if c["group"] == g]
        return float(np.mean(v)) if v else None

    result = {
        "generator": "testdata/peer/lenet5.py, PyTorch %s, NumPy %s, Python %s" % (
            torch.__version__, np.__version__, platform.python_version()),
        "dataset": manifest["Dataset"], "suite_seed": manifest["Seed"], "seeds": list(SEEDS),
        "epochs": EPOCHS, "train_cpu_seconds": times,
        "mean_mnist_c_accuracy": group_mean("mnist-c"),
        "mean_heldout_accuracy": group_mean("heldout"),
        "conditions": conditions,
    }
    with open(out_path, "w") as f:
        json.dump(result, f, indent=1)
    print("%s: clean %.4f, mean MNIST-C %s, mean held-out %s -> %s" % (
        manifest["Dataset"], conditions[0]["mean"], result["mean_mnist_c_accuracy"],
        result["mean_heldout_accuracy"], out_path))


if __name__ == "__main__":
    main()
