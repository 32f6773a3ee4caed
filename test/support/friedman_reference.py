"""Friedman #1 written by scikit-learn, and what scikit-learn's online linear model makes of it.

Friedman, "Multivariate adaptive regression splines", Annals of Statistics 19(1), 1991:
x ~ U[0, 1]^10, y = 10 sin(pi x1 x2) + 20 (x3 - 0.5)^2 + 10 x4 + 5 x5 + N(0, 1); x6..x10 are noise.
The rows come from `sklearn.datasets.make_friedman1` (scikit-learn 1.9.1, pinned in .ci/run), so the
data is made outside Shoal.

Usage: friedman_reference.py OUT.csv ROWS SEED
Writes OUT.csv (columns x1..x10, label; floats in Python's shortest round-trip form) and prints one JSON
object: scikit-learn's version; the RMSE of `SGDRegressor.partial_fit` run test-then-train over the rows
in file order (each row predicted before the model is fitted on it; default settings, random_state 0)
over the second half of the rows; the RMSE over that half of the least-squares plane fitted to all rows
(`LinearRegression`, the best any linear model can do there, in hindsight); and the population
variance of the targets over all rows.
"""

import csv
import json
import sys

import numpy as np
import sklearn
from sklearn.datasets import make_friedman1
from sklearn.linear_model import LinearRegression, SGDRegressor


def main() -> None:
    out, rows, seed = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
    x, y = make_friedman1(n_samples=rows, n_features=10, noise=1.0, random_state=seed)
    with open(out, "w", newline="") as f:
        writer = csv.writer(f)
        writer.writerow([f"x{j + 1}" for j in range(10)] + ["label"])
        for features, target in zip(x, y):
            writer.writerow([repr(float(v)) for v in features] + [repr(float(target))])

    sgd = SGDRegressor(random_state=0)
    predicted = np.zeros(rows)
    for i in range(rows):
        if i > 0:
            predicted[i] = x[i] @ sgd.coef_ + sgd.intercept_[0]
        sgd.partial_fit(x[i : i + 1], y[i : i + 1])
    half = rows // 2
    rmse = lambda e: float(np.sqrt(np.mean(e**2)))
    plane = LinearRegression().fit(x, y)
    print(
        json.dumps(
            {
                "version": sklearn.__version__,
                "sgdRmse": rmse(y[half:] - predicted[half:]),
                "planeRmse": rmse(y[half:] - plane.predict(x[half:])),
                "variance": float(np.var(y)),
            }
        )
    )


main()
