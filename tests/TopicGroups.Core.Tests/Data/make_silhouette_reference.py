"""Reference silhouettes for the Silhouette tests, from scikit-learn (Debian 12's python3-sklearn 1.2.1).

Run from this folder:
    apt-get install -y python3-sklearn python3-numpy
    /usr/bin/python3 make_silhouette_reference.py > silhouette_reference.json

Input: the first 300 rows of digits.csv.gz (see README.md), 64 pixel counts each. Three labellings of
those rows are scored with sklearn.metrics.silhouette_score(X, labels, metric="cosine") and
silhouette_samples(X, labels, metric="cosine"); cosine distance is 1 - cos, as in TopicGroups.
  digit      : the true digit (10 groups)
  digit_mod3 : digit % 3 (3 groups, each mixing several digits)
  singleton  : the true digit, except that row 0 alone forms group 10 (a one-member group scores 0)
"""
import json

import numpy as np
import sklearn
from sklearn.metrics import silhouette_samples, silhouette_score

ROWS = 300


def main():
    data = np.loadtxt("digits.csv.gz", delimiter=",")[:ROWS]
    x = data[:, :-1].astype(np.float64)
    digit = data[:, -1].astype(int)
    singleton = digit.copy()
    singleton[0] = 10
    labellings = {"digit": digit, "digit_mod3": digit % 3, "singleton": singleton}
    out = {"tools": {"sklearn": sklearn.__version__, "numpy": np.__version__}, "rows": ROWS, "labellings": {}}
    for name, labels in labellings.items():
        out["labellings"][name] = {
            "labels": labels.tolist(),
            "silhouette_score": float(silhouette_score(x, labels, metric="cosine")),
            "silhouette_samples": silhouette_samples(x, labels, metric="cosine").tolist(),
        }
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main()
