#!/usr/bin/python3
"""The reference for the replay benchmark: what a practitioner would write in Python to
group the same files — pandas read_csv, the same transforms, z-scores fitted on the
first WARMUP rows, then scikit-learn MiniBatchKMeans.partial_fit in batches, reading each
batch's labels (labels_) and tallying them per sample.

Usage: python_pipeline.py DIR [K BATCH WARMUP]. Prints one line:
  rows N seconds S    (S from the first read to the last tally, imports excluded)
"""
import os
import sys
import time

import numpy as np
import pandas as pd
from sklearn.cluster import MiniBatchKMeans
from sklearn.preprocessing import StandardScaler

FEATURES = [("area_um2", np.log10), ("esd_um", np.log10), ("aspect_ratio", None),
            ("perimeter_um", np.log10), ("grey_level", None), ("circularity", None),
            ("biovolume_um3", np.log10), ("grey_area_um2", np.log10)]


def transformed(frame):
    columns = [fn(frame[name].to_numpy()) if fn else frame[name].to_numpy()
               for name, fn in FEATURES]
    return np.column_stack(columns)


def main():
    directory = sys.argv[1]
    k = int(sys.argv[2]) if len(sys.argv) > 2 else 16
    batch = int(sys.argv[3]) if len(sys.argv) > 3 else 1024
    warmup = int(sys.argv[4]) if len(sys.argv) > 4 else 20000
    files = sorted(f for f in os.listdir(directory) if f.endswith(".csv"))
    start = time.perf_counter()
    model = MiniBatchKMeans(n_clusters=k, batch_size=batch, n_init=3, random_state=1)
    scaler = None
    held, rows = [], 0
    counts = {}
    for name in files:
        frame = pd.read_csv(os.path.join(directory, name))
        rows += len(frame)
        x = transformed(frame)
        samples = frame["sample"].to_numpy()
        if scaler is None:
            held.append((x, samples))
            if sum(len(h[0]) for h in held) < warmup:
                continue
            x = np.vstack([h[0] for h in held])
            samples = np.concatenate([h[1] for h in held])
            held = []
            scaler = StandardScaler().fit(x)
        z = scaler.transform(x)
        for begin in range(0, len(z), batch):
            model.partial_fit(z[begin:begin + batch])
            labels = model.labels_
            for sample, count in zip(*np.unique(samples[begin:begin + batch] + "/" +
                                                labels.astype(str), return_counts=True)):
                counts[sample] = counts.get(sample, 0) + count
    seconds = time.perf_counter() - start
    print("rows %d seconds %.3f groups %d" % (rows, seconds, len(counts)))


if __name__ == "__main__":
    main()
