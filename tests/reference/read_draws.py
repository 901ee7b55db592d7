#!/usr/bin/python3
"""Reads a covey draws file with h5py (independently of covey) and prints it as JSON:
root attributes, variable names, parent-mask rows and log weights. Used by exact_draws_test."""
import json
import sys

import h5py

with h5py.File(sys.argv[1], "r") as f:
    def plain(value):
        if isinstance(value, bytes):
            return value.decode("utf-8")
        if hasattr(value, "item"):
            return value.item()
        return value

    out = {
        "attributes": {key: plain(f.attrs[key]) for key in f.attrs},
        "names": [plain(x) for x in f["variables/names"][()]],
        "parents": [[int(w) for w in row] for row in f["draws/parents"][()]],
        "log_weight": [float(x) for x in f["draws/log_weight"][()]],
        "parents_dtype": str(f["draws/parents"].dtype),
    }
print(json.dumps(out))
