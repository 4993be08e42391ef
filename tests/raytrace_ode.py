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
    """(index_in_firn(z), dn_ice/dz(z), n_air).  Above z = 0 the firn index is continued
    as the constant n_surface, so that the integrator never steps across a jump
    in n and a ray that reaches the surface keeps going up until the crossing
    event stops it; the side of the surface a ray is on is tracked by ``shoot``."""
    d = n_deep - n_surface

    def n(z):
        return n_deep - d * math.exp(min(z, 0.0) / scale_depth)

    def dndz(z):
        return 0.0 if z > 0.0 else -d / scale_depth * math.exp(z / scale_depth)

    return n, dndz, n_air


def shoot(index, source_z, invariant, upward, x_end, bounce=True, rtol=1e-12, atol=1e-10,
          max_step=2.0):
    """Trace a ray from (0, source_z) until it reaches horizontal distance x_end.

    The ray starts with horizontal slowness ``invariant`` (the Snell
    invariant) going up if ``upward``; at the surface it is reflected if
    ``bounce``, else transmitted.  Returns (z at x_end [m], travel time [ns],
    path length [m]) or None if the ray never gets there.
    """
    index_in_firn, dndz_ice, n_air = index
    side = {"air": source_z > 0}

    def n(z):
        return n_air if side["air"] else index_in_firn(z)

    def dndz(z):
        return 0.0 if side["air"] else dndz_ice(z)

    n0 = n(source_z)
    kz = math.sqrt(max(n0 * n0 - invariant * invariant, 0.0))
    state = np.array([0.0, source_z, invariant, kz if upward else -kz, 0.0, 0.0])

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
                        events=[reach_x, cross_surface], max_step=max_step)
        if sol.t_events[0].size:
            y = sol.y_events[0][0]
            return y[1], y[4], y[5]
        if not sol.t_events[1].size:
            return None
        y = sol.y_events[1][0].copy()
        kx = y[2]
        going_up = y[3] > 0
        if bounce:
            y[3] = -y[3]          # reflection off the surface
            y[1] = -1e-12 if going_up else 1e-12
        elif going_up:            # transmission into the air
            side["air"] = True
            y[3] = math.sqrt(n_air ** 2 - kx ** 2)
            y[1] = 1e-12
        else:                     # transmission into the ice
            side["air"] = False
            y[3] = -math.sqrt(index_in_firn(0.0) ** 2 - kx ** 2)
            y[1] = -1e-12
        state = y
    return None


def reach_at_height(index, source_z, launch_zenith_deg, target_z, descending, bounce=True,
                    rtol=1e-12, atol=1e-12, max_step=2.0):
    """Horizontal distance [m] at which a ray from (0, source_z) launched at the
    given zenith crosses height target_z (going down if ``descending``), with a
    specular bounce at the surface; None if it never does.  Used for finite
    differences of the traced reach with respect to the launch angle."""
    index_in_firn, dndz, _ = index
    theta = math.radians(launch_zenith_deg)
    n0 = index_in_firn(source_z)
    y = np.array([0.0, source_z, n0 * math.sin(theta), n0 * math.cos(theta)])

    def rhs(s, y):
        nz = index_in_firn(y[1])
        return [y[2] / nz, y[3] / nz, 0.0, dndz(y[1])]

    def cross_target(s, y):
        return y[1] - target_z
    cross_target.terminal = True
    cross_target.direction = -1 if descending else 1

    def cross_surface(s, y):
        return y[1]
    cross_surface.terminal = True
    cross_surface.direction = 1

    for _ in range(3):
        sol = solve_ivp(rhs, (0.0, 1e6), y, method="DOP853", rtol=rtol, atol=atol,
                        events=[cross_target, cross_surface], max_step=max_step)
        if sol.t_events[0].size:
            return float(sol.y_events[0][0][0])
        if not sol.t_events[1].size or not bounce:
            return None
        y = sol.y_events[1][0].copy()
        y[3] = -y[3]
        y[1] = -1e-12
    return None
