"""A stand-in for a robot's trial harness: the planar arm with a stuck joint and a reaching
task, written with numpy from README.md's arm definition (links 1/n, end effector
p = sum_i (1/n)(cos a_i, sin a_i), a_i = theta_1 + ... + theta_i; Craig, Introduction to
Robotics), speaking the external evaluator line protocol on stdin/stdout:
  in  {"id": N, "genome": [...]}    out  {"id": N, "fitness": F, "descriptor": [x, y]}
Fitness = -(distance of the end effector to the target).

usage: arm_damaged_worker.py STUCK_JOINT STUCK_ANGLE TARGET_X TARGET_Y
"""
import json
import sys

import numpy as np


def main():
    joint, angle = int(sys.argv[1]), float(sys.argv[2])
    target = np.array([float(sys.argv[3]), float(sys.argv[4])])
    for line in sys.stdin:
        request = json.loads(line)
        theta = np.array(request["genome"], dtype=float)
        theta[joint] = angle
        a = np.cumsum(theta)
        p = np.array([np.cos(a).sum(), np.sin(a).sum()]) / theta.size
        answer = {"id": request["id"], "fitness": -float(np.hypot(*(p - target))),
                  "descriptor": [float(p[0]), float(p[1])]}
        sys.stdout.write(json.dumps(answer) + "\n")
        sys.stdout.flush()


if __name__ == "__main__":
    main()
