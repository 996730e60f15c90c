"""The way a careful scientist would compute a Bayes rule in numerical Python: the
posterior matrix (measurements x states) times the loss matrix (states x estimates),
then the best estimate per measurement and the Bayes risk. Usage:
    reference.py STATES MEASUREMENTS LOSS
prints `bayes_risk seconds` (seconds of the computation, after imports and set-up of
the grids). The problem is the one tests/bench/bench.py writes for lopside."""
import sys
import time

import numpy as np
from scipy.special import ndtr

from problems import LOSSES, grids

n_s, n_m, loss = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
s, x, h, dx = grids(n_s, n_m)
start = time.perf_counter()
# Prior: normal(50, 15) cell masses over [s - h/2, s + h/2], renormalized to the grid.
prior = ndtr((s + h / 2 - 50) / 15) - ndtr((s - h / 2 - 50) / 15)
prior /= prior.sum()
# Likelihood of each measurement in each state: gaussian noise, sd 4.
like = np.exp(-0.5 * ((x[:, None] - s[None, :]) / 4.0) ** 2) / (4.0 * np.sqrt(2 * np.pi))
joint = like * prior[None, :]
predictive = joint.sum(axis=1)
posterior = joint / predictive[:, None]
# Loss of every estimate (the state grid) in every state, then expected losses.
error = s[None, :] - s[:, None]          # estimate - state, rows: states
expected = posterior @ LOSSES[loss](error)
risk = float(np.sum(predictive * dx * expected.min(axis=1)))
seconds = time.perf_counter() - start
print(f"{risk:.17g} {seconds:.9f}")
