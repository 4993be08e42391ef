"""When does the second pulse arrive for a cascade 800 m away?

An antenna hangs 150 m deep on a string at the invented Tallow Dome station;
a particle cascade at 800 m horizontal distance radiates from several depths.
For each source depth this prints both pulses (direct, then refracted or
reflected) and the delay between them, which is what turns a pulse pair into
a distance.

    python examples/second_pulse_delay.py [--quick] [--plot delay.png]
"""

import argparse

import numpy as np

import firnray


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer source depths")
    parser.add_argument("--plot", help="write the delay against source depth to this PNG")
    args = parser.parse_args(argv)
    prof = firnray.load_profile("demo-dry-firn")
    depths = np.linspace(-200.0, -1600.0, 4 if args.quick else 15)
    sources = np.column_stack([np.zeros_like(depths), depths])
    batch = firnray.find_rays_many(prof, sources, (800.0, -150.0))
    print(f"{'source z [m]':>12} {'first':>10} {'t1 [ns]':>10} {'second':>10} "
          f"{'t2 [ns]':>10} {'delay [ns]':>11}")
    delays = np.full(len(depths), np.nan)
    for i, z in enumerate(depths):
        rays = batch[i]
        if len(rays) < 2:
            print(f"{z:12.1f}  fewer than two rays ({len(rays)})")
            continue
        first, second = rays[0], rays[1]
        delays[i] = second.travel_time - first.travel_time
        print(f"{z:12.1f} {first.kind:>10} {first.travel_time:10.2f} {second.kind:>10} "
              f"{second.travel_time:10.2f} {delays[i]:11.2f}")
    if args.plot:
        import matplotlib.pyplot as plt
        fig, ax = plt.subplots(figsize=(6, 4))
        ax.plot(delays, depths, "o-")
        ax.set_xlabel("delay between the two pulses [ns]")
        ax.set_ylabel("source height z [m]")
        ax.set_title("antenna at z = -150 m, cascade 800 m away", fontsize=9)
        fig.tight_layout()
        fig.savefig(args.plot, dpi=110)


if __name__ == "__main__":
    main()
