"""Independent numpy transcription of CMA-ES as written in Hansen, "The CMA Evolution Strategy:
A Tutorial" (arXiv:1604.00772, 2016): Table 1 (default constants, with negative weights) and the
update equations of its summary (Section "Algorithm": eqs. for m, p_sigma, sigma, p_c, C).

usage: cma_tutorial.py CASE.json
CASE.json: {"n": n, "lambda": l, "mean": [...], "sigma": s,
            "generations": [{"parents": k or 0, "ranked": [[x_1], ..., [x_lambda]]}, ...]}
parents = 0 takes Table 1's weights; parents = k > 0 recombines only the best k with positive
weights ln(k + 1/2) - ln i (the classic default) and no negative weights.
Prints JSON: one {"mean", "pc", "ps", "C", "sigma"} per generation. C^{-1/2} is recomputed from
C with numpy.linalg.eigh every generation.
"""
import json
import sys

import numpy as np


def constants(n, lam, parents):
    if parents == 0:
        mu = lam // 2
        wp = np.log((lam + 1) / 2) - np.log(np.arange(1, lam + 1))
    else:
        mu = parents
        wp = np.zeros(lam)
        wp[:mu] = np.log(mu + 0.5) - np.log(np.arange(1, mu + 1))
    mueff = wp[:mu].sum() ** 2 / (wp[:mu] ** 2).sum()
    alpha_cov = 2.0
    cc = (4 + mueff / n) / (n + 4 + 2 * mueff / n)
    cs = (mueff + 2) / (n + mueff + 5)
    c1 = alpha_cov / ((n + 1.3) ** 2 + mueff)
    cmu = min(1 - c1, alpha_cov * (mueff - 2 + 1 / mueff) / ((n + 2) ** 2 + alpha_cov * mueff / 2))
    damps = 1 + 2 * max(0.0, np.sqrt((mueff - 1) / (n + 1)) - 1) + cs
    w = np.zeros(lam)
    w[:mu] = wp[:mu] / wp[:mu].sum()
    if parents == 0 and mu < lam:
        neg = wp[mu:]
        mueff_minus = neg.sum() ** 2 / (neg ** 2).sum()
        alpha_mu_minus = 1 + c1 / cmu
        alpha_mueff_minus = 1 + 2 * mueff_minus / (mueff + 2)
        alpha_posdef_minus = (1 - c1 - cmu) / (n * cmu)
        w[mu:] = min(alpha_mu_minus, alpha_mueff_minus, alpha_posdef_minus) * neg / np.abs(neg).sum()
    return dict(w=w, mu=mu, mueff=mueff, cc=cc, cs=cs, c1=c1, cmu=cmu, damps=damps)


def main():
    with open(sys.argv[1]) as f:
        case = json.load(f)
    n, lam = case["n"], case["lambda"]
    m = np.array(case["mean"], dtype=float)
    sigma = float(case["sigma"])
    C = np.eye(n)
    pc = np.zeros(n)
    ps = np.zeros(n)
    chin = np.sqrt(n) * (1 - 1 / (4 * n) + 1 / (21 * n ** 2))
    out = []
    for g, gen in enumerate(case["generations"]):
        k = constants(n, lam, gen["parents"])
        w = k["w"]
        x = np.array(gen["ranked"], dtype=float)
        y = (x - m) / sigma
        yw = (w[: k["mu"], None] * y[: k["mu"]]).sum(axis=0)
        evals, vecs = np.linalg.eigh(C)
        c_inv_sqrt = vecs @ np.diag(1 / np.sqrt(evals)) @ vecs.T
        m = m + 1.0 * sigma * yw
        ps = (1 - k["cs"]) * ps + np.sqrt(k["cs"] * (2 - k["cs"]) * k["mueff"]) * (c_inv_sqrt @ yw)
        hsig = np.linalg.norm(ps) / np.sqrt(1 - (1 - k["cs"]) ** (2 * (g + 1))) < (1.4 + 2 / (n + 1)) * chin
        pc = (1 - k["cc"]) * pc + (np.sqrt(k["cc"] * (2 - k["cc"]) * k["mueff"]) * yw if hsig else 0)
        wo = np.array([wi if wi >= 0 else wi * n / np.linalg.norm(c_inv_sqrt @ yi) ** 2
                       for wi, yi in zip(w, y)])
        dh = (1 - hsig) * k["cc"] * (2 - k["cc"])
        C = ((1 + k["c1"] * dh - k["c1"] - k["cmu"] * w.sum()) * C + k["c1"] * np.outer(pc, pc)
             + k["cmu"] * sum(wi * np.outer(yi, yi) for wi, yi in zip(wo, y)))
        sigma = sigma * np.exp(k["cs"] / k["damps"] * (np.linalg.norm(ps) / chin - 1))
        out.append({"mean": m.tolist(), "pc": pc.tolist(), "ps": ps.tolist(),
                    "C": C.tolist(), "sigma": sigma})
    json.dump(out, sys.stdout)


if __name__ == "__main__":
    main()
