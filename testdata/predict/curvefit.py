#!/usr/bin/env python3
"""Fit the 2,000-point cooling curve with scipy.optimize.curve_fit.

Writes the curve (curvefit_curve.csv) and curve_fit's parameters
(curvefit_golden.json) into the output directory (default: this script's
directory), and prints curve_fit's CPU time per fit. The Go test
TestFitLumpedCurveFitGolden compares predict.FitLumped with the golden values
to 1e-6 relative; TestCurveFitScriptReproduces re-runs this script into a temp
dir when python3 and scipy are present.

The curve is our own: T = 22 + 180·exp(−t/900) °C over an hour, Gaussian
noise σ = 0.1 °C from a fixed seed, quantised to 0.1 °C like a logger.

Usage: python3 curvefit.py [OUTDIR]   (Debian: apt-get install python3-scipy)
       python3 curvefit.py --time CSV [REPS]

With --time it only times curve_fit on the curve in CSV and prints one JSON line of
CPU microseconds per fit: "default" as above (the script's own start, numerical
Jacobian), "jacobian" (the script's own start, analytic Jacobian) and
"well_started" (started at the parameters the curve was made with, 22, 180, 900,
with the analytic Jacobian), the most favourable set-up for curve_fit. The Go
benchmark BenchmarkFitLumpedVsCurveFit runs it beside predict.FitLumped.
"""
import json
import os
import sys
import time

import numpy as np
from scipy.optimize import curve_fit


def model(t, amb, exc, tau):
    return amb + exc * np.exp(-t / tau)


def jacobian(t, amb, exc, tau):
    e = np.exp(-t / tau)
    return np.stack([np.ones_like(t), e, exc * t * e / tau**2], axis=1)


def cpu_per_fit(fit, reps):
    fit()  # warm-up
    c0 = time.process_time()
    for _ in range(reps):
        fit()
    return (time.process_time() - c0) / reps * 1e6


def time_only(path, reps):
    data = np.loadtxt(path, delimiter=",", skiprows=1)
    t, y = data[:, 0], data[:, 1]
    p0 = (y[-1], y[0] - y[-1], (t[-1] - t[0]) / 3)
    out = {
        "default": cpu_per_fit(lambda: curve_fit(model, t, y, p0=p0), reps),
        "jacobian": cpu_per_fit(lambda: curve_fit(model, t, y, p0=p0, jac=jacobian), reps),
        "well_started": cpu_per_fit(lambda: curve_fit(model, t, y, p0=(22.0, 180.0, 900.0), jac=jacobian), reps),
        "reps": reps,
    }
    print(json.dumps(out))


def main():
    if len(sys.argv) > 2 and sys.argv[1] == "--time":
        time_only(sys.argv[2], int(sys.argv[3]) if len(sys.argv) > 3 else 300)
        return
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    rng = np.random.default_rng(20260101)
    n = 2000
    t = 3600.0 * np.arange(n) / (n - 1)
    y = model(t, 22.0, 180.0, 900.0) + 0.1 * rng.standard_normal(n)
    y = np.round(y * 10) / 10
    with open(os.path.join(out, "curvefit_curve.csv"), "w") as f:
        f.write("t_s,temp_c\n")
        for ti, yi in zip(t, y):
            f.write(f"{ti:.17g},{yi:.1f}\n")
    # Read the file back so the fit sees exactly the values the Go test reads.
    data = np.loadtxt(os.path.join(out, "curvefit_curve.csv"), delimiter=",", skiprows=1)
    t, y = data[:, 0], data[:, 1]
    p0 = (y[-1], y[0] - y[-1], (t[-1] - t[0]) / 3)

    # Golden values: tolerances far tighter than the defaults, so the values are the
    # least-squares optimum itself rather than wherever the default stopping rule stops.
    popt, pcov = curve_fit(model, t, y, p0=p0, ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
    golden = {
        "source": "scipy.optimize.curve_fit %s (method lm), testdata/predict/curvefit.py" % __import__("scipy").__version__,
        "ambient_c": popt[0],
        "initial_excess_c": popt[1],
        "tau_s": popt[2],
        "ambient_se": float(np.sqrt(pcov[0, 0])),
        "initial_excess_se": float(np.sqrt(pcov[1, 1])),
        "tau_se": float(np.sqrt(pcov[2, 2])),
    }
    with open(os.path.join(out, "curvefit_golden.json"), "w") as f:
        json.dump(golden, f, indent=2)
        f.write("\n")

    # Timing at curve_fit's default tolerances (its everyday use), CPU time per fit.
    reps = 200
    c0 = time.process_time()
    for _ in range(reps):
        curve_fit(model, t, y, p0=p0)
    per = (time.process_time() - c0) / reps
    print("curve_fit: %.1f us CPU per fit (2000 points, default tolerances, %d reps)" % (per * 1e6, reps))
    print(json.dumps(golden))


if __name__ == "__main__":
    main()
