#!/usr/bin/python3
"""Independent BDeu local scores (Heckerman, Geiger & Chickering 1995) with SciPy's gammaln.

Usage: bdeu_reference.py DATA.csv QUERIES.json
QUERIES.json: [{"child": name, "parents": [names], "ess": a}, ...]
Prints a JSON list with one log score per query.

The CSV is read with Python's csv module; the levels of a column are its distinct values; counts
come from collections.Counter. Score of child v with parent set S (q = product of the parents'
numbers of levels, r = levels of v), summed over observed parent configurations j:
  gammaln(a/q) - gammaln(a/q + N_j) + sum_k [gammaln(a/(q r) + N_jk) - gammaln(a/(q r))]
"""
import csv
import json
import sys
from collections import Counter

from scipy.special import gammaln


def main():
    with open(sys.argv[1], newline="") as f:
        rows = list(csv.reader(f))
    header, data = rows[0], rows[1:]
    columns = {name: [row[i] for row in data] for i, name in enumerate(header)}
    with open(sys.argv[2]) as f:
        queries = json.load(f)
    out = []
    for query in queries:
        child, parents, ess = query["child"], query["parents"], float(query["ess"])
        q = 1
        for p in parents:
            q *= len(set(columns[p]))
        r = len(set(columns[child]))
        configs = [tuple(columns[p][i] for p in parents) for i in range(len(data))]
        n_j = Counter(configs)
        n_jk = Counter(zip(configs, columns[child]))
        a_j, a_jk = ess / q, ess / (q * r)
        score = sum(gammaln(a_j) - gammaln(a_j + n) for n in n_j.values())
        score += sum(gammaln(a_jk + n) - gammaln(a_jk) for n in n_jk.values())
        out.append(float(score))
    print(json.dumps(out))


if __name__ == "__main__":
    main()
