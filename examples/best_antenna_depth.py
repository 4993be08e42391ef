"""Which antenna depth sees the most ice?

For antennas at several depths at the invented Tallow Dome site, this counts
the area of the vertical section (distance out to 4 km, source depths down to
2 km) from which at least one ray reaches the antenna, using the shadow
boundary of each source depth.

    python examples/best_antenna_depth.py [--quick] [--plot area.png]
"""

import argparse

import numpy as np

import firnray


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="coarser grid")
    parser.add_argument("--plot", help="write the visible area against antenna depth to this PNG")
    args = parser.parse_args(argv)
    prof = firnray.load_profile("demo-dry-firn")
    z = np.linspace(-2000.0, -1.0, 50 if args.quick else 1000)
    dz = z[1] - z[0]
    print(f"{'antenna z [m]':>14}{'visible area [km^2]':>22}")
    antennas = (-5.0, -40.0, -100.0, -150.0, -200.0)
    areas = []
    for antenna in antennas:
        reach = np.minimum(firnray.shadow_boundary(prof, antenna, z), 4000.0)
        areas.append(np.sum(reach) * dz / 1e6)
        print(f"{antenna:>14.1f}{areas[-1]:>22.3f}")
    if args.plot:
        import matplotlib.pyplot as plt
        fig, ax = plt.subplots(figsize=(6, 4))
        ax.plot(areas, antennas, "o-")
        ax.set_xlabel("visible area of the section, 4 km x 2 km [km^2]")
        ax.set_ylabel("antenna height z [m]")
        fig.tight_layout()
        fig.savefig(args.plot, dpi=110)


if __name__ == "__main__":
    main()
