#!/usr/bin/python3
"""Independent BGe marginal likelihoods by the Normal-Wishart predictive chain rule.

Usage: bge_reference.py DATA.csv QUERIES.json
QUERIES.json: a list of {"alpha_mu": a, "alpha_w": w or null (n + 2), "standardize": bool,
                         "subsets": [[names], ...]}
Prints a JSON list with, per query, the list of log p(D_Y) for its subsets Y.

Model (Geiger & Heckerman 2002; parametrization of Kuipers, Moffa & Heckerman 2014): over all n
variables, W ~ Wishart(alpha_w, T^-1), mu | W ~ N(nu, (alpha_mu W)^-1), nu = the sample mean,
T = t I with t = alpha_mu (alpha_w - n - 1) / (alpha_mu + 1). The marginal model of a subset Y
(p = |Y|) is Normal-Wishart with alpha_w - n + p degrees of freedom and scale t I_p.

p(D_Y) is computed as the product of one-step predictive densities p(x_i | x_1..x_{i-1}): after m
observations the predictive is a multivariate t (scipy.stats.multivariate_t) with
  df = a_m - p + 1, loc = (alpha_mu nu + m xbar_m) / (alpha_mu + m),
  shape = T_m (k_m + 1) / (k_m df), k_m = alpha_mu + m, a_m = (alpha_w - n + p) + m,
  T_m = T + S_m + (alpha_mu m / (alpha_mu + m)) (xbar_m - nu)(xbar_m - nu)^T.
"""
import csv
import json
import sys

import numpy as np
from scipy.stats import multivariate_t


def log_marginal(x, alpha_mu, alpha_w_sub, t, nu):
    n_rows, p = x.shape
    prior_scale = t * np.eye(p)
    total = 0.0
    for m in range(n_rows):
        if m == 0:
            loc, scale = nu, prior_scale
        else:
            seen = x[:m]
            xbar = seen.mean(axis=0)
            centered = seen - xbar
            loc = (alpha_mu * nu + m * xbar) / (alpha_mu + m)
            scale = (prior_scale + centered.T @ centered
                     + (alpha_mu * m / (alpha_mu + m)) * np.outer(xbar - nu, xbar - nu))
        k_m = alpha_mu + m
        df = alpha_w_sub + m - p + 1
        shape = scale * (k_m + 1) / (k_m * df)
        total += multivariate_t(loc=loc, shape=shape, df=df).logpdf(x[m])
    return float(total)


def main():
    with open(sys.argv[1], newline="") as f:
        rows = list(csv.reader(f))
    header = rows[0]
    data = np.array([[float(v) for v in row] for row in rows[1:]])
    with open(sys.argv[2]) as f:
        queries = json.load(f)
    n = len(header)
    out = []
    for query in queries:
        alpha_mu = float(query["alpha_mu"])
        alpha_w = float(query["alpha_w"]) if query.get("alpha_w") is not None else n + 2.0
        x_all = data
        if query.get("standardize"):
            x_all = (data - data.mean(axis=0)) / data.std(axis=0, ddof=1)
        t = alpha_mu * (alpha_w - n - 1) / (alpha_mu + 1)
        values = []
        for subset in query["subsets"]:
            idx = [header.index(name) for name in subset]
            x = x_all[:, idx]
            values.append(log_marginal(x, alpha_mu, alpha_w - n + len(idx), t, x.mean(axis=0)))
        out.append(values)
    print(json.dumps(out))


if __name__ == "__main__":
    main()
