#!/usr/bin/python3
"""Reads a covey score table with h5py only (not covey) and prints it as JSON.

Usage: read_scores_h5.py SCORES.h5
Output: {"attributes": {...}, "variables": [{"name", "kind", "levels"}],
         "nodes": [{"candidates": [...], "sets": [[[parent indices], log_score], ...]}]}
Parent sets are decoded from the masks over each node's candidate list (bit i = candidates[i]),
as docs/file-formats.md describes.
"""
import json
import sys

import h5py


def text(value):
    return value.decode() if isinstance(value, bytes) else str(value)


def main():
    with h5py.File(sys.argv[1], "r") as f:
        attributes = {}
        for key, value in f.attrs.items():
            attributes[key] = text(value) if isinstance(value, (bytes, str)) else value.item()
        attributes["parameters"] = json.loads(attributes["parameters"])
        var = f["variables"]
        names = [text(s) for s in var["names"][()]]
        kinds = [text(s) for s in var["kinds"][()]]
        levels = [text(s) for s in var["levels"][()]]
        level_offsets = var["level_offsets"][()]
        variables = [{"name": names[i], "kind": kinds[i],
                      "levels": levels[level_offsets[i]:level_offsets[i + 1]]}
                     for i in range(len(names))]
        nodes_group = f["nodes"]
        cand_offsets = nodes_group["candidate_offsets"][()]
        candidates = nodes_group["candidates"][()]
        set_offsets = nodes_group["set_offsets"][()]
        masks = nodes_group["parent_masks"][()]
        scores = nodes_group["log_scores"][()]
        nodes = []
        for v in range(len(names)):
            cand = [int(c) for c in candidates[cand_offsets[v]:cand_offsets[v + 1]]]
            sets = []
            for i in range(set_offsets[v], set_offsets[v + 1]):
                mask = int(masks[i])
                parents = sorted(cand[b] for b in range(len(cand)) if mask >> b & 1)
                sets.append([parents, float(scores[i])])
            nodes.append({"candidates": cand, "sets": sets})
    print(json.dumps({"attributes": attributes, "variables": variables, "nodes": nodes}))


if __name__ == "__main__":
    main()
