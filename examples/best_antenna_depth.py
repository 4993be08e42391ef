"""Which antenna depth sees the most ice?

For antennas at several depths at the invented Tallow Dome site, this counts
the area of the vertical section (distance out to 4 km, source depths down to
2 km) from which at least one ray reaches the antenna, using the shadow
boundary of each source depth.

    python examples/best_antenna_depth.py [--quick]
"""

import argparse

import numpy as np

import firnray


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="coarser grid")
    args = parser.parse_args(argv)
    prof = firnray.load_profile("demo-dry-firn")
    z = np.linspace(-2000.0, -1.0, 50 if args.quick else 1000)
    dz = z[1] - z[0]
    print(f"{'antenna z [m]':>14}{'visible area [km^2]':>22}")
    for antenna in (-5.0, -40.0, -100.0, -150.0, -200.0):
        reach = np.minimum(firnray.shadow_boundary(prof, antenna, z), 4000.0)
        print(f"{antenna:>14.1f}{np.sum(reach) * dz / 1e6:>22.3f}")


if __name__ == "__main__":
    main()
