"""Reference values for the principal-components (map) tests, from scikit-learn (Debian 12 package).

Run from this folder:
    apt-get install -y python3-sklearn python3-numpy
    /usr/bin/python3 make_pca_reference.py > pca_reference.json

Input: digits.csv.gz (see README.md), every row scaled to unit length, as TopicGroups maps unit vectors.
sklearn's PCA(n_components=2, svd_solver="full") is an exact SVD of the centred rows. Eigenvectors are
defined up to sign; both sides flip each component so that its entry of largest magnitude is positive
(sklearn.utils.extmath.svd_flip with u_based_decision=False does the same), so the values compare directly.
"""
import json

import numpy as np
import sklearn
from sklearn.decomposition import PCA

ROWS_LISTED = 25


def main():
    data = np.loadtxt("digits.csv.gz", delimiter=",")
    pixels = data[:, :-1].astype(np.float32).astype(np.float64)
    unit = pixels / np.linalg.norm(pixels, axis=1, keepdims=True)

    pca = PCA(n_components=2, svd_solver="full").fit(unit)
    components = pca.components_.copy()
    for k in range(components.shape[0]):
        j = int(np.argmax(np.abs(components[k])))
        if components[k, j] < 0:
            components[k] = -components[k]
    coordinates = (unit - pca.mean_) @ components.T

    print(json.dumps({
        "source": f"scikit-learn {sklearn.__version__} PCA(n_components=2, svd_solver='full') on the unit-length digits rows",
        "rows": int(unit.shape[0]),
        "explained_variance_ratio": pca.explained_variance_ratio_.tolist(),
        "components": components.tolist(),
        "first_rows": ROWS_LISTED,
        "coordinates": coordinates[:ROWS_LISTED].tolist(),
    }, indent=1))


if __name__ == "__main__":
    main()
