"""Reference evaluation of the shipped problems with numpy, written from README.md
"Shipped problems" independently of the C++ code.

usage: shipped_problems.py PROBLEM GENOME_FILE
GENOME_FILE holds one genome per line (whitespace-separated numbers). Prints one line per genome:
fitness d1 d2 (repr, so the values read back exactly).
"""
import sys

import numpy as np


def arm(theta):
    # Planar arm forward kinematics (Craig, Introduction to Robotics): links 1/n, cumulative angles.
    n = theta.size
    a = np.cumsum(theta)
    return -np.var(theta), np.sum(np.cos(a)) / n, np.sum(np.sin(a)) / n


def projection(x, objective):
    # Linear projection benchmark after Fontaine et al., GECCO 2020 (parameters from memory).
    shift = 2.048
    f = objective(x - shift)
    f_max = objective(np.full(x.size, -5.12) - shift)
    fitness = np.clip(100.0 * (f_max - f) / f_max, 0.0, 100.0)
    c = np.where(np.abs(x) <= 5.12, x, 5.12 / x)
    half = x.size // 2
    return fitness, np.sum(c[:half]), np.sum(c[half:])


def sphere(z):
    return np.sum(z * z)


def rastrigin(z):
    # Rastrigin 1974; Muehlenbein et al. 1991.
    return 10.0 * z.size + np.sum(z * z - 10.0 * np.cos(2.0 * np.pi * z))


def main():
    problem, path = sys.argv[1], sys.argv[2]
    with open(path) as f:
        for line in f:
            if not line.strip():
                continue
            g = np.array([float(v) for v in line.split()])
            if problem == "arm":
                row = arm(g)
            elif problem == "sphere-proj":
                row = projection(g, sphere)
            elif problem == "rastrigin-proj":
                row = projection(g, rastrigin)
            else:
                sys.exit("unknown problem " + problem)
            print(" ".join(repr(float(v)) for v in row))


if __name__ == "__main__":
    main()
