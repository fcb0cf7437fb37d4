#!/usr/bin/python3
"""A vectorised numpy MAP-Elites on the planar arm, written from README.md alone ("What the search
does", "Shipped problems"): the baseline the engine is compared with (bench/arm_vs_numpy.py).

Arm: n = 10 joints, links 1/n, genome = joint angles in [-pi, pi], descriptor = end effector
(x, y) in [-1, 1]^2, fitness = -(population variance of the angles), lowest possible -pi^2.
Grid 100x100 over the descriptor box; batch 1024; the first batch is uniform random genomes;
then parents are drawn uniformly from the elites and varied by Iso+LineDD (sigma_iso = 0.01 and
sigma_line = 0.2, both defaults of the README), children clipped to the bounds. A child enters an
empty cell or replaces a strictly worse elite; within a batch candidates count in order, which
for the final state equals: per cell, the batch's best (first among equals) against the elite.
Prints the evaluations per second of the whole loop and the QD-score (sum of fitness + pi^2).

Usage: arm_numpy_baseline.py [EVALUATIONS] [SEED]   (defaults 2,000,000 and 1)
"""
import sys
import time

import numpy as np

JOINTS = 10
RESOLUTION = 100
BATCH = 1024
SIGMA_ISO = 0.01
SIGMA_LINE = 0.2
LOWER, UPPER = -np.pi, np.pi
FITNESS_FLOOR = -np.pi ** 2


def evaluate(genomes):
    """Fitness and end effector of a batch of arms (rows), computed joint by joint over the batch."""
    angles = np.cumsum(genomes, axis=1)
    link = 1.0 / genomes.shape[1]
    x = link * np.cos(angles).sum(axis=1)
    y = link * np.sin(angles).sum(axis=1)
    fitness = -genomes.var(axis=1)
    return fitness, x, y


def cells_of(x, y):
    """Grid cell of each descriptor: floor of the scaled coordinate, the upper bound in the last."""
    ix = np.clip(np.floor((x + 1.0) / 2.0 * RESOLUTION).astype(np.int64), 0, RESOLUTION - 1)
    iy = np.clip(np.floor((y + 1.0) / 2.0 * RESOLUTION).astype(np.int64), 0, RESOLUTION - 1)
    return ix * RESOLUTION + iy


def run(evaluations, seed):
    rng = np.random.default_rng(seed)
    cells = RESOLUTION * RESOLUTION
    elite_fitness = np.full(cells, -np.inf)
    elite_genome = np.zeros((cells, JOINTS))
    filled = np.zeros(cells, dtype=bool)
    width = UPPER - LOWER
    done = 0
    while done < evaluations:
        count = min(BATCH, evaluations - done)
        occupied = np.flatnonzero(filled)
        if done == 0 or occupied.size == 0:
            children = rng.uniform(LOWER, UPPER, size=(count, JOINTS))
        else:
            x = elite_genome[occupied[rng.integers(0, occupied.size, count)]]
            y = elite_genome[occupied[rng.integers(0, occupied.size, count)]]
            line = SIGMA_LINE * rng.standard_normal((count, 1))
            children = x + SIGMA_ISO * width * rng.standard_normal((count, JOINTS)) + line * (y - x)
            np.clip(children, LOWER, UPPER, out=children)
        fitness, dx, dy = evaluate(children)
        cell = cells_of(dx, dy)
        # Per cell the batch's best child, the first among equals: sort by (cell, -fitness, index).
        order = np.lexsort((np.arange(count), -fitness, cell))
        first = np.ones(count, dtype=bool)
        first[1:] = cell[order][1:] != cell[order][:-1]
        best = order[first]
        better = fitness[best] > elite_fitness[cell[best]]
        winners = best[better]
        elite_fitness[cell[winners]] = fitness[winners]
        elite_genome[cell[winners]] = children[winners]
        filled[cell[winners]] = True
        done += count
    qd_score = float(np.sum(elite_fitness[filled] - FITNESS_FLOOR))
    return qd_score, int(filled.sum())


def main():
    evaluations = int(sys.argv[1]) if len(sys.argv) > 1 else 2_000_000
    seed = int(sys.argv[2]) if len(sys.argv) > 2 else 1
    start = time.perf_counter()
    qd_score, elites = run(evaluations, seed)
    seconds = time.perf_counter() - start
    print(f"evaluations {evaluations} seconds {seconds:.3f} rate {evaluations / seconds:.0f} "
          f"qd_score {qd_score:.6f} elites {elites}")


if __name__ == "__main__":
    main()
