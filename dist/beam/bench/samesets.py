"""Compares two output folders of trueup and trueup-beam file by file.

Every file must be the same bytes, except: run.json less timings_seconds
(wall-clock times); and a Parquet file whose data pages are the same
bytes while its footer holds the same bytes in another order. trueup
itself writes such footers differently from run to run at this size:
arrow-go lists a column chunk's page encoding statistics in map order
once a column's dictionary falls back to plain pages. Such files' SHA-256
in run.json are left out of the comparison too. The CSV tables of the
same run, written whole by trueup, are compared byte for byte.

    python3 samesets.py LOCAL_DIR BEAM_DIR
"""
import json
import os
import struct
import sys


def footer_only(x, y):
    """Whether two Parquet files differ only in the order of their footer's bytes."""
    if len(x) != len(y) or x[-4:] != b"PAR1":
        return False
    fx, fy = struct.unpack("<I", x[-8:-4])[0], struct.unpack("<I", y[-8:-4])[0]
    body = len(x) - 8 - fx
    return fx == fy and x[:body] == y[:body] and sorted(x[body:]) == sorted(y[body:])


a, b = sys.argv[1], sys.argv[2]
names = sorted(os.listdir(a))
if names != sorted(os.listdir(b)):
    sys.exit(f"  DIFFERENT file lists: {names} against {sorted(os.listdir(b))}")
reordered, bad = set(), False
for n in names:
    if n == "run.json":
        continue
    x, y = (open(os.path.join(d, n), "rb").read() for d in (a, b))
    how = "same bytes"
    if x != y:
        if n.endswith(".parquet") and footer_only(x, y):
            how, _ = "same data pages; footer bytes in another order", reordered.add(n)
        else:
            how, bad = "DIFFERENT", True
    print(f"  {n}: {how}")
runs = []
for d in (a, b):
    r = json.load(open(os.path.join(d, "run.json")))
    r.pop("timings_seconds")
    for f in r.get("files", []):
        if f.get("name") in reordered:
            f.pop("sha256", None)
    runs.append(r)
same = runs[0] == runs[1]
bad = bad or not same
print("  run.json: " + ("same less timings_seconds" + (" and the reordered files' SHA-256" if reordered else "") if same else "DIFFERENT"))
sys.exit(1 if bad else 0)
