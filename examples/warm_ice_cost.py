"""How much does a warmer ice column cost in signal at 300 MHz?

A cascade 1000 m deep and 1200 m away from an antenna 150 m deep at the
invented Tallow Dome site: the absorption of the direct ray at 300 MHz for
invented ice columns whose surface temperature runs from -55 C to -25 C
(Robin steady-state profiles, MacGregor et al. 2007 conductivity).

    python examples/warm_ice_cost.py [--quick] [--plot cost.png]
"""

import argparse

import firnray


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer columns")
    parser.add_argument("--plot", help="write the absorption against surface temperature "
                                       "to this PNG")
    args = parser.parse_args(argv)
    prof = firnray.load_profile("demo-dry-firn")
    ray = firnray.find_rays(prof, (0.0, -1000.0), (1200.0, -150.0))[0]
    temps = (-55.0, -25.0) if args.quick else (-55.0, -50.0, -45.0, -40.0, -35.0, -30.0, -25.0)
    print(f"{ray.kind} ray, {ray.path_length:.0f} m through the ice")
    print(f"{'surface T [C]':>14}{'absorption at 300 MHz [dB]':>30}{'total path loss [dB]':>24}")
    absorption = []
    for t in temps:
        column = firnray.RobinTemperature(surface_c=t, accumulation_m_per_yr=0.08,
                                          geothermal_flux_w_m2=0.06, thickness_m=2800.0)
        bud = firnray.signal_budget(ray, 300.0, firnray.ArrheniusAttenuation(column))
        absorption.append(bud.attenuation_db[0])
        print(f"{t:>14.1f}{bud.attenuation_db[0]:>30.2f}{bud.total_db_s[0]:>24.2f}")
    if args.plot:
        import matplotlib.pyplot as plt
        fig, ax = plt.subplots(figsize=(6, 4))
        ax.plot(temps, absorption, "o-")
        ax.set_xlabel("surface temperature of the ice column [C]")
        ax.set_ylabel("absorption of the direct ray at 300 MHz [dB]")
        fig.tight_layout()
        fig.savefig(args.plot, dpi=110)


if __name__ == "__main__":
    main()
