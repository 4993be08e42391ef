"""Independent ray shooting with scipy's solve_ivp (used by the tests and benchmarks).

Outside source: the ray equations of geometric optics in a medium n(z) in
Hamiltonian form (for example Born & Wolf, Principles of Optics, section 3.2):
with the slowness vector k = n * direction,

    dx/ds = k_x / n,   dz/ds = k_z / n,   dk_x/ds = 0,   dk_z/ds = dn/dz,   dt/ds = n / c

integrated in path length s.  At the surface z = 0 a reflected ray flips k_z;
a transmitted ray keeps k_x (Snell) and takes k_z = ±sqrt(n_2² - k_x²).
Nothing here is shared with the firnray solver.
"""

import math

import numpy as np
from scipy.integrate import solve_ivp

C = 0.299792458  # m/ns, SI definition


def make_index(n_deep, n_surface, scale_depth, n_air=1.0):
    d = n_deep - n_surface

    def n(z):
        return n_air if z > 0 else n_deep - d * math.exp(z / scale_depth)

    def dndz(z):
        return 0.0 if z > 0 else -d / scale_depth * math.exp(z / scale_depth)

    return n, dndz


def shoot(index, source_z, launch_zenith_deg, x_end, bounce=True, rtol=1e-12, atol=1e-10):
    """Trace a ray from (0, source_z) until it reaches horizontal distance x_end.

    Returns (z at x_end [m], travel time [ns], path length [m]) or None if the
    ray never gets there.
    """
    n, dndz = index
    theta = math.radians(launch_zenith_deg)
    n0 = n(source_z)
    state = np.array([0.0, source_z, n0 * math.sin(theta), n0 * math.cos(theta), 0.0, 0.0])

    def rhs(s, y):
        nz = n(y[1])
        return [y[2] / nz, y[3] / nz, 0.0, dndz(y[1]), nz / C, 1.0]

    def reach_x(s, y):
        return y[0] - x_end
    reach_x.terminal = True

    def cross_surface(s, y):
        return y[1]
    cross_surface.terminal = True

    s_total = 0.0
    for _ in range(4):
        sol = solve_ivp(rhs, (0.0, 1e6), state, method="DOP853", rtol=rtol, atol=atol,
                        events=[reach_x, cross_surface], max_step=50.0)
        if sol.t_events[0].size:
            y = sol.y_events[0][0]
            return y[1], y[4], y[5]
        if not sol.t_events[1].size:
            return None
        y = sol.y_events[1][0].copy()
        kx = y[2]
        going_up = y[3] > 0
        if going_up and bounce:
            y[3] = -y[3]          # reflection off the surface from below
        elif going_up:
            n_top = n(1.0)
            y[3] = math.sqrt(n_top ** 2 - kx ** 2)
        else:
            n_bot = n(0.0)
            y[3] = -math.sqrt(n_bot ** 2 - kx ** 2)
        y[1] = 1e-12 if (going_up and not bounce) else -1e-12
        state = y
    return None
