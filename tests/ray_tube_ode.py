"""Independent ray-tube shooting with scipy's solve_ivp (tests of spreading, focusing and
absorption along rays in non-monotone profiles).

Outside source: the ray equations of geometric optics in Hamiltonian form (for
example Born & Wolf, Principles of Optics, section 3.2), as in
``tests/raytrace_ode.py``, integrated in path length s with the slowness
vector k = n * direction:

    dx/ds = k_x / n,   dz/ds = k_z / n,   dk_x/ds = 0,   dk_z/ds = dn/dz,

together with their linearisation with respect to the Snell invariant b = k_x
(the variational equations of the same system; common practice in dynamic
ray tracing):

    d(dx)/ds  = dk_x / n - k_x n' dz / n^2,    d(dz)/ds = dk_z / n - k_z n' dz / n^2,
    d(dk_x)/ds = 0,                            d(dk_z)/ds = n'' dz,

started from (0, 0, 1, -b / k_z).  At the target distance x_end the change of
the landing height with b at fixed x is dz - (dz/dx) dx, so the horizontal
distance a ray of invariant b needs to reach the target height changes as
dX/db = -(dz/db)|_x / (dz/dx).  A field attenuation length L(z) can be
integrated along as dA/ds = 1 / L(z).  The surface z = 0 reflects (k_z and its
variation change sign).  Nothing here is shared with the firnray solver.
"""

import math

import numpy as np
from scipy.integrate import solve_ivp


def shoot_tube(index, slope, curvature, source_z, invariant, upward, x_end, attenuation=None,
               rtol=1e-11, atol=1e-12, max_step=0.5, max_bounces=200):
    """Shoot a ray and its variation with b from (0, source_z) to horizontal distance x_end.

    Parameters
    ----------
    index, slope, curvature : callable
        n(z), dn/dz and d2n/dz2 at a height z <= 0 [m].
    source_z : float
        Source height [m].
    invariant : float
        Snell invariant b [1].
    upward : bool
        Launch upwards.
    x_end : float
        Horizontal distance to stop at [m].
    attenuation : callable, optional
        Field attenuation length L(z) [m]; the absorption exponent is then
        integrated along.

    Returns
    -------
    dict or None
        ``z`` [m], ``dz_dx`` [1] and ``dX_db`` [m] at x_end, ``length`` [m],
        ``absorption`` [1] (0 without ``attenuation``), ``bounces``; None if
        the ray never gets there.
    """
    n0 = index(source_z)
    kz0 = math.sqrt(n0 * n0 - invariant * invariant) * (1.0 if upward else -1.0)
    state = np.array([0.0, source_z, invariant, kz0, 0.0, 0.0, 1.0, -invariant / kz0, 0.0, 0.0])

    def rhs(s, y):
        x, z, kx, kz, vx, vz, vkx, vkz, _, _ = y
        n, dn, d2n = index(z), slope(z), curvature(z)
        absorb = 0.0 if attenuation is None else 1.0 / attenuation(z)
        return [kx / n, kz / n, 0.0, dn,
                vkx / n - kx * dn * vz / n ** 2, vkz / n - kz * dn * vz / n ** 2, 0.0,
                d2n * vz, 1.0, absorb]

    def reach_x(s, y):
        return y[0] - x_end
    reach_x.terminal = True

    def reach_surface(s, y):
        return y[1]
    reach_surface.terminal = True
    reach_surface.direction = 1

    for bounces in range(max_bounces + 1):
        sol = solve_ivp(rhs, (0.0, 1e7), state, method="DOP853", rtol=rtol, atol=atol,
                        events=[reach_x, reach_surface], max_step=max_step)
        if sol.t_events[0].size:
            x, z, kx, kz, vx, vz, _, _, length, absorb = sol.y_events[0][0]
            dz_dx = kz / kx
            return {"z": z, "dz_dx": dz_dx, "dX_db": -(vz - dz_dx * vx) / dz_dx,
                    "length": length, "absorption": absorb, "bounces": bounces}
        if not sol.t_events[1].size:
            return None
        state = sol.y_events[1][0].copy()
        state[3], state[7], state[1] = -state[3], -state[7], -1e-13    # reflection
    return None


def tube_focusing(index, source_z, receiver, invariant, launch_zenith, arrival_zenith, dX_db):
    """Amplitude focusing factor and relative spreading derivative from a shot ray tube.

    With dX/dtheta_0 = dX/db * n(source) cos(theta_0), the spreading distance
    is R_eq^2 = X |dX/dtheta_0| |cos theta_r| / sin theta_0 (energy in a ray
    tube; ``docs/theory.md`` 7.1).

    Returns
    -------
    (float, float)
        focusing = straight distance / R_eq [1], |dX/dtheta_0| / X [1/rad].
    """
    x, z_r = receiver
    th0 = math.radians(launch_zenith)
    thr = math.radians(arrival_zenith)
    dx_dth = abs(dX_db * index(source_z) * math.cos(th0))
    r_eq = math.sqrt(x * dx_dth * abs(math.cos(thr)) / math.sin(th0))
    return math.hypot(x, z_r - source_z) / r_eq, dx_dth / x
