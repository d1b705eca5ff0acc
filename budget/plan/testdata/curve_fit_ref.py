# Generates curve_fit_ref.json: noisy pilot points for one method from a fixed
# seed, and the fit of P(k) = Pbar - (Pbar - P0)*exp(-lam*k) to them by
# scipy.optimize.curve_fit (scipy 1.10, Debian python3-scipy), with standard
# errors sqrt(diag(pcov)) (absolute_sigma=False, so pcov is scaled by
# RSS/(n-p)). k is fitted in units of 1e9 tokens; lam is per 1e9 tokens.
# Run: /usr/bin/python3 curve_fit_ref.py > curve_fit_ref.json
import json
import numpy as np
import scipy
from scipy.optimize import curve_fit

def model(k, p0, pbar, lam):
    return pbar - (pbar - p0) * np.exp(-lam * k)

rng = np.random.default_rng(20261202)
true = (0.31, 0.58, 2.4)
tokens = np.array([0, 5e7, 1e8, 2e8, 4e8, 6e8, 8e8, 1.2e9, 1.6e9, 2e9])
k = tokens / 1e9
metric = model(k, *true) + rng.normal(0, 0.006, size=k.size)
popt, pcov = curve_fit(model, k, metric, p0=(0.3, 0.5, 1.0),
                       ftol=1e-15, xtol=1e-15, gtol=1e-15, maxfev=100000)
print(json.dumps({
    "scipy": scipy.__version__,
    "tokens": tokens.tolist(),
    "metric": [float(m) for m in metric],
    "p0": popt[0], "pbar": popt[1], "lambda_per_1e9": popt[2],
    "p0_se": float(np.sqrt(pcov[0, 0])),
    "pbar_se": float(np.sqrt(pcov[1, 1])),
    "lambda_per_1e9_se": float(np.sqrt(pcov[2, 2])),
}, indent=1))
