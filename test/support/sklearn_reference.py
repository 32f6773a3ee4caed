"""Reference accuracies from scikit-learn for a dataset in a fixed row order.

Reads a CSV (label first, then numeric features, in the order the Shoal test streams them) and prints
JSON with:
- prequential: GaussianNB run test-then-train over the same order in batches of `batch` rows (each
  batch is predicted by the model fitted on every earlier row, then learnt with partial_fit);
- forest: a RandomForestClassifier (100 trees) fitted on the first 70% of the rows and scored on the
  last 30%, the batch ceiling.
Usage: python3 sklearn_reference.py data.csv [batch]
"""
import json
import sys

import numpy as np
from sklearn import __version__
from sklearn.ensemble import RandomForestClassifier
from sklearn.naive_bayes import GaussianNB


def main() -> None:
    path = sys.argv[1]
    batch = int(sys.argv[2]) if len(sys.argv) > 2 else 50
    data = np.loadtxt(path, delimiter=",")
    y = data[:, 0].astype(int)
    x = np.nan_to_num(data[:, 1:])
    classes = np.unique(y)
    nb = GaussianNB()
    right = 0
    for start in range(0, len(y), batch):
        stop = min(start + batch, len(y))
        if start > 0:
            right += int((nb.predict(x[start:stop]) == y[start:stop]).sum())
        nb.partial_fit(x[start:stop], y[start:stop], classes=classes)
    # The first batch has no model to predict it: it counts as wrong, as a prequential run's cold start.
    cut = int(0.7 * len(y))
    forest = RandomForestClassifier(n_estimators=100, random_state=0, n_jobs=1)
    forest.fit(x[:cut], y[:cut])
    ceiling = float((forest.predict(x[cut:]) == y[cut:]).mean())
    print(json.dumps({"version": __version__, "prequential": right / len(y), "forest": ceiling}))


main()
