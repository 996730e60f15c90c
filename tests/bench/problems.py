"""The benchmark problems, shared by the numpy reference and the driver: a target at
0 to 100 mm on a grid of states, a normal(50, 15) prior, gaussian noise of sd 4 mm, a
fixed measurement grid from -20 to 120 mm, and four losses of the estimate's error."""
import numpy as np

INI = """[problem]
title = Bench: {loss} loss, {states} states x {measurements} measurements
unit = mm
score_unit = points
[states]
from = 0
to = 100
points = {states}
[prior]
family = normal
mean = 50
sd = 15
[evidence.vision]
noise = gaussian
sd = 4
grid_from = -20
grid_to = 120
grid_points = {measurements}
[actions]
estimate = yes
[loss]
{curve}
"""

CURVES = {
    "squared": "curve = squared",
    "linlin": "curve = linlin\nunder = 1\nover = 3",
    "tolerance": "curve = tolerance\nhalf_width = 2\noutside = 1",
    "points": "curve = points\nerror = -6, -2, 0, 2, 6\nvalue = 1, 0.3, 0, 0.5, 1",
}

LOSSES = {
    "squared": lambda e: e * e,
    "linlin": lambda e: np.where(e < 0, -1.0 * e, 3.0 * e),
    "tolerance": lambda e: np.where(np.abs(e) <= 2, 0.0, 1.0),
    "points": lambda e: np.interp(e, [-6, -2, 0, 2, 6], [1, 0.3, 0, 0.5, 1]),
}


def grids(n_states, n_measurements):
    """States, measurements, state spacing and measurement spacing, as lopside makes them."""
    s = np.linspace(0, 100, n_states)
    x = np.linspace(-20, 120, n_measurements)
    return s, x, s[1] - s[0], x[1] - x[0]


def ini(loss, n_states, n_measurements):
    """The problem file for lopside."""
    return INI.format(loss=loss, states=n_states, measurements=n_measurements,
                      curve=CURVES[loss])
