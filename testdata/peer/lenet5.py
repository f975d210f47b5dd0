#!/usr/bin/python3
"""LeNet-5 peer on striate's development suite (protocol: ../shared/bench/README.md §3).

A LeNet-5-like CNN trained with PyTorch (Debian python3-torch, CPU, 2 threads) on the clean
training split, then scored on exactly the images striate is scored on: the clean test split and
every condition of datasets.DevelopmentSuite (15 MNIST-C corruptions x 5 severities and the
six-kind grid), written by the Go side with seed datasets.SuiteSeed:

    STRIATE_SUITE_OUT=/tmp/suite go test -run TestWriteSuite -timeout 60m ./datasets
    /usr/bin/python3 testdata/peer/lenet5.py /tmp/suite/mnist   testdata/peer/lenet5_mnist.json
    /usr/bin/python3 testdata/peer/lenet5.py /tmp/suite/fashion testdata/peer/lenet5_fashion.json

Model: Conv(1->6, 5x5, pad 2)-ReLU-MaxPool2-Conv(6->16, 5x5)-ReLU-MaxPool2-FC(400->120)-ReLU-
FC(120->84)-ReLU-FC(84->10); input u8/255, no normalisation, no augmentation; Adam lr 1e-3,
batch 64, 10 epochs, cross-entropy; seeds 0, 1, 2 (torch.manual_seed(seed) before the model is
built, epoch shuffles from torch.Generator().manual_seed(seed)); accuracy after the last epoch,
mean of the three seeds. Not part of `go test`. The output JSON holds, per condition, the
accuracy of each seed and their mean, with the library versions and the suite's seed.
"""
import gzip, json, os, platform, sys, time

import numpy as np
import torch
import torch.nn as nn

SEEDS = (0, 1, 2)
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


def main():
    if len(sys.argv) != 3:
        sys.exit("usage: lenet5.py SUITE_DIR OUT.json  (SUITE_DIR written by TestWriteSuite)")
    src, out_path = sys.argv[1], sys.argv[2]
    torch.set_num_threads(2)
    with open(os.path.join(src, "suite.json")) as f:
        manifest = json.load(f)
    x_train = images(os.path.join(src, "train-images.idx.gz"))
    y_train = torch.from_numpy(read_idx(os.path.join(src, "train-labels.idx.gz")).astype(np.int64))
    y_test = torch.from_numpy(read_idx(os.path.join(src, "test-labels.idx.gz")).astype(np.int64))
    conditions = [{"name": "clean", "group": "clean", "file": manifest["Clean"]}]
    conditions += [{"name": c["Name"], "group": c["Group"], "kind": c["Kind"], "unit": c["Unit"],
                    "level": c["Level"], "file": c["File"]} for c in manifest["Suite"]]
    tests = {}
    for c in conditions:
        x = images(os.path.join(src, c["file"]))
        if x.shape[0] != y_test.shape[0]:
            sys.exit("%s: %d images for %d labels" % (c["file"], x.shape[0], y_test.shape[0]))
        tests[c["name"]] = x
    for c in conditions:
        c["accuracy"] = []
    times = []
    for seed in SEEDS:
        t0 = time.process_time()
        model = train(x_train, y_train, seed)
        times.append(time.process_time() - t0)
        for c in conditions:
            c["accuracy"].append(accuracy(model, tests[c["name"]], y_test))
        print("seed %d: clean %.4f, %.0f CPU-s" % (seed, conditions[0]["accuracy"][-1], times[-1]), flush=True)
    for c in conditions:
        c["mean"] = float(np.mean(c["accuracy"]))
    mnistc = [c["mean"] for c in conditions if c["group"] == "mnist-c"]
    result = {
        "generator": "testdata/peer/lenet5.py, PyTorch %s, NumPy %s, Python %s" % (
            torch.__version__, np.__version__, platform.python_version()),
        "dataset": manifest["Dataset"], "suite_seed": manifest["Seed"], "seeds": list(SEEDS),
        "epochs": EPOCHS, "train_cpu_seconds": times,
        "mean_mnist_c_accuracy": float(np.mean(mnistc)) if mnistc else None,
        "conditions": conditions,
    }
    with open(out_path, "w") as f:
        json.dump(result, f, indent=1)
    print("%s: clean %.4f, mean MNIST-C %.4f -> %s" % (manifest["Dataset"], conditions[0]["mean"],
                                                        result["mean_mnist_c_accuracy"] or 0, out_path))


if __name__ == "__main__":
    main()
