"""Is this reconstructed vertex consistent with the pulses that were seen?

Reads the invented demo arrival times of the Tallow Dome station, fits the
vertex, and compares the chi^2 of the fit with that of a candidate vertex
handed over by another reconstruction (here an invented one 60 m off).

    python examples/vertex_consistency.py [--quick] [--plot residuals.png]
"""

import argparse
import os

import numpy as np
from scipy.stats import chi2

import firnray
from firnray.studies.timing_files import read_arrivals_csv

HERE = os.path.dirname(os.path.abspath(__file__))
DEMO = os.path.join(HERE, "..", "firnray", "data", "examples", "demo-arrivals.csv")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="(no effect: already quick)")
    parser.add_argument("--plot", help="write the timing residuals of the fit and of the "
                                       "candidate to this PNG")
    args = parser.parse_args(argv)
    prof = firnray.load_profile("demo-dry-firn")
    station = firnray.load_station("tallow-dome-demo")
    rows = read_arrivals_csv(DEMO)
    fit = firnray.fit_vertex(prof, station, rows)
    print(f"fit: vertex {np.round(fit.vertex, 1)} m, chi2 {fit.chi2:.1f} / {fit.ndof}, "
          f"p-value {chi2.sf(fit.chi2, fit.ndof):.2f}")
    candidate = fit.vertex + np.array([60.0, 0.0, 0.0])
    pred = firnray.predict_arrivals(prof, station, candidate)
    # best emission time for the candidate, then its chi^2 with the same pulse matching
    times = {a: sorted(t for i, t, s in rows if i == a) for a in station.ids}
    res = []
    for a, meas in times.items():
        pt = pred.arrival_time[0, station.index(a), :len(meas)]
        res.extend(np.array(meas) - pt)
    res = np.array(res)
    offset = np.nanmean(res)
    c2 = float(np.nansum((res - offset) ** 2))  # sigma = 1 ns in the demo file
    ndof = int(np.isfinite(res).sum()) - 1     # the vertex is given; only t0 is fitted
    p = chi2.sf(c2, ndof)
    print(f"candidate 60 m away: chi2 {c2:.1f} / {ndof}, p-value {p:.2g}: "
          f"{'consistent' if p > 0.01 else 'not consistent'} with the pulses")
    if args.plot:
        import matplotlib.pyplot as plt
        from firnray.faces.plots import plot_timing_residuals
        ids = list(dict.fromkeys(fit.antenna_ids))
        per = [fit.residuals[[a == i for a in fit.antenna_ids]] for i in ids]
        fig, (ax1, ax2) = plt.subplots(1, 2, figsize=(11, 4), sharey=True)
        plot_timing_residuals(ids, per, ax=ax1)
        ax1.set_ylabel("timing residual [ns] (sigma = 1 ns)")
        ax1.set_title("fitted vertex", fontsize=9)
        names = [a for a, meas in times.items() for _ in meas]
        cand = [(res - offset)[[a == i for a in names]] for i in ids]
        plot_timing_residuals(ids, cand, ax=ax2)
        ax2.set_ylabel("")
        ax2.set_title("candidate 60 m away (best emission time)", fontsize=9)
        fig.tight_layout()
        fig.savefig(args.plot, dpi=110)


if __name__ == "__main__":
    main()
