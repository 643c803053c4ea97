#!/usr/bin/python3
"""Turns seston-sim sample files (5 numeric feature columns) into d = 8 files for the
replay benchmark by appending three columns derived from each particle's own values:

  circularity     4*pi*area_um2 / perimeter_um**2   (1 for a disc, smaller when ragged)
  biovolume_um3   pi/6 * esd_um**3                  (equivalent-sphere volume)
  grey_area_um2   area_um2 * grey_level / 255       (area weighted by grey level)

Usage: derive_columns.py IN_DIR OUT_DIR. Every IN_DIR/*.csv becomes OUT_DIR/<same name>.
Plain text processing line by line (values are kept as written), so the output differs
from the input only by the three appended fields.
"""
import math
import os
import sys


def main():
    in_dir, out_dir = sys.argv[1], sys.argv[2]
    os.makedirs(out_dir, exist_ok=True)
    for name in sorted(os.listdir(in_dir)):
        if not name.endswith(".csv"):
            continue
        with open(os.path.join(in_dir, name)) as source, \
                open(os.path.join(out_dir, name), "w") as out:
            header = source.readline().rstrip("\n").split(",")
            column = {title: i for i, title in enumerate(header)}
            area, esd = column["area_um2"], column["esd_um"]
            perimeter, grey = column["perimeter_um"], column["grey_level"]
            out.write(",".join(header + ["circularity", "biovolume_um3", "grey_area_um2"]) + "\n")
            for line in source:
                line = line.rstrip("\n")
                if not line:
                    continue
                fields = line.split(",")
                a, d = float(fields[area]), float(fields[esd])
                p, g = float(fields[perimeter]), float(fields[grey])
                out.write("%s,%.4f,%.6g,%.6g\n" % (line, 4 * math.pi * a / (p * p),
                                                   math.pi / 6 * d ** 3, a * g / 255))


if __name__ == "__main__":
    main()
