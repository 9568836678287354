"""Reference values for the clustering tests, from general-purpose libraries (Debian 12 packages).

Run from this folder:
    apt-get install -y python3-sklearn python3-faiss python3-numpy
    /usr/bin/python3 make_reference.py > reference_values.json

Inputs: digits.csv.gz, the UCI optical handwritten digits set (1,797 images of 8 x 8 pixels, 64
features, last column the digit), copied unchanged from Debian's python3-sklearn
(/usr/lib/python3/dist-packages/sklearn/datasets/data/digits.csv.gz).

Every objective is computed the same way as TopicGroups reports it: rows scaled to unit length, each
row assigned to its most similar centre, then objective = mean cosine of each row to the renormalised
mean of its group (= sum over groups of ||sum of members|| / n).
"""
import json

import faiss
import numpy as np
import sklearn
from sklearn.cluster import KMeans
from sklearn.metrics import adjusted_rand_score, normalized_mutual_info_score, rand_score

GROUPS = 10
NITER = 100
NREDO = 8
SEEDS = range(20)


def load_digits():
    data = np.loadtxt("digits.csv.gz", delimiter=",")
    x = data[:, :-1].astype(np.float32)
    y = data[:, -1].astype(int)
    x /= np.linalg.norm(x, axis=1, keepdims=True)
    return x, y


def objective_of_labels(x, labels):
    total = 0.0
    for group in np.unique(labels):
        total += np.linalg.norm(x[labels == group].astype(np.float64).sum(axis=0))
    return total / len(x)


def faiss_run(x, seed):
    km = faiss.Kmeans(x.shape[1], GROUPS, spherical=True, niter=NITER, nredo=NREDO, seed=seed, verbose=False)
    km.train(x)
    labels = np.argmax(x @ km.centroids.T, axis=1)
    return labels


def sklearn_run(x, seed):
    # Euclidean k-means on unit rows (not spherical, but the same partitions score the same objective).
    km = KMeans(n_clusters=GROUPS, n_init=NREDO, max_iter=NITER, random_state=seed).fit(x)
    return km.labels_


def partition_examples():
    # Manning, Raghavan & Schuetze, Introduction to Information Retrieval (2008), section 16.3, Figure 16.4:
    # clusters {5 x, 1 o}, {1 x, 4 o, 1 diamond}, {2 x, 3 diamond}; classes x = 0, o = 1, diamond = 2.
    clusters = [0] * 6 + [1] * 6 + [2] * 5
    classes = [0] * 5 + [1] + [0] + [1] * 4 + [2] + [0] * 2 + [2] * 3
    purity = sum(max(classes[i:j].count(c) for c in range(3)) for i, j in [(0, 6), (6, 12), (12, 17)]) / 17
    extra = {
        # Two small pairs: renamed labels agree perfectly; splitting one class in two agrees partly.
        "permuted": {"truth": [0, 0, 1, 1, 2, 2], "found": [2, 2, 0, 0, 1, 1]},
        "split": {"truth": [0, 0, 0, 1, 1, 1], "found": [0, 0, 1, 1, 2, 2]},
    }
    result = {
        "iir_16_3": {
            "clusters": clusters,
            "classes": classes,
            "purity": purity,
            "nmi_arithmetic": normalized_mutual_info_score(classes, clusters, average_method="arithmetic"),
            "rand_index": rand_score(classes, clusters),
            "adjusted_rand_index": adjusted_rand_score(classes, clusters),
        }
    }
    for name, pair in extra.items():
        result[name] = dict(pair)
        result[name]["nmi_arithmetic"] = normalized_mutual_info_score(pair["truth"], pair["found"])
        result[name]["adjusted_rand_index"] = adjusted_rand_score(pair["truth"], pair["found"])
    return result


def main():
    x, y = load_digits()
    faiss_objectives, faiss_nmi, sk_objectives, sk_nmi = [], [], [], []
    for seed in SEEDS:
        labels = faiss_run(x, seed)
        faiss_objectives.append(objective_of_labels(x, labels))
        faiss_nmi.append(normalized_mutual_info_score(y, labels))
        labels = sklearn_run(x, seed)
        sk_objectives.append(objective_of_labels(x, labels))
        sk_nmi.append(normalized_mutual_info_score(y, labels))
    out = {
        "tools": {"faiss": faiss.__version__, "sklearn": sklearn.__version__, "numpy": np.__version__},
        "digits": {
            "rows": int(x.shape[0]),
            "dimensions": int(x.shape[1]),
            "groups": GROUPS,
            "niter": NITER,
            "nredo": NREDO,
            "seeds": list(SEEDS),
            "faiss_spherical_objective": faiss_objectives,
            "faiss_spherical_nmi": faiss_nmi,
            "sklearn_kmeans_objective": sk_objectives,
            "sklearn_kmeans_nmi": sk_nmi,
        },
        "partitions": partition_examples(),
    }
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main()
