#!/usr/bin/python3
"""Medians and ratios from the JSON lines bench/run-peers.sh collects (ours and the peers, same run).

  /usr/bin/python3 bench/summarise-peers.py results.jsonl [more.jsonl ...]

Per data set and runner: median wall seconds of the fit (ours: "seconds", normalisation + seeding +
iterations; peers: "fit_s"), median seeding seconds, median objective (every runner scored the same way:
final reassignment, mean best cosine), median peak memory. Ratios are ours / peer, twice: of the medians,
and the median of the per-rep ratios (runs of one rep ran back to back, so load drift cancels better).
"""
import json
import statistics
import sys
from collections import defaultdict


def seconds(r):
    return r.get("seconds") if r["peer"].startswith("topicgroups") else r.get("fit_s")


def seeding(r):
    return r.get("seeding_seconds") if r["peer"].startswith("topicgroups") else r.get("init_s")


def peak_mib(r):
    if r["peer"].startswith("topicgroups"):
        return r["peak_memory_bytes"] / 2**20
    return r.get("peak_rss_mib")


def med(values):
    values = [v for v in values if v is not None]
    return statistics.median(values) if values else None


def fmt(v, digits=3):
    return "-" if v is None else f"{v:.{digits}f}"


def main(paths):
    rows = []
    for path in paths:
        with open(path) as f:
            rows += [json.loads(line) for line in f if line.startswith("{")]
    rows = [r for r in rows if "error" not in r]
    by = defaultdict(list)
    for r in rows:
        by[(r["dataset"], r["peer"])].append(r)

    datasets = sorted({d for d, _ in by}, key=lambda d: ("SMLX".find(d[0]), d))
    print("| data | runner | reps | seconds (median) | seeding s | objective | peak MiB | other cores busy before |")
    print("|---|---|---|---|---|---|---|---|")
    for d in datasets:
        for (dd, peer), rs in sorted(by.items()):
            if dd != d:
                continue
            loads = [r.get("pre_other_cores") for r in rs if r.get("pre_other_cores") is not None]
            load_text = f"{min(loads):.2f}-{max(loads):.2f}" if loads else "-"
            print(f"| {d} | {peer} | {len(rs)} | {fmt(med(seconds(r) for r in rs))} | {fmt(med(seeding(r) for r in rs))} "
                  f"| {fmt(med(r.get('objective') for r in rs), 5)} | {fmt(med(peak_mib(r) for r in rs), 0)} | {load_text} |")

    print()
    print("| data | ours / peer | ratio of medians | median of per-rep ratios | objective ours - peer |")
    print("|---|---|---|---|---|")
    for d in datasets:
        ours = by.get((d, "topicgroups"), [])
        if not ours:
            continue
        ours_by_rep = {r["rep"]: r for r in ours}
        for peer in ("faiss_full", "sk_lloyd", "faiss_default", "sk_elkan"):
            theirs = by.get((d, peer), [])
            if not theirs:
                continue
            ratio_of_medians = med(seconds(r) for r in ours) / med(seconds(r) for r in theirs)
            paired = [seconds(ours_by_rep[r["rep"]]) / seconds(r) for r in theirs if r["rep"] in ours_by_rep]
            objective_gap = med(r["objective"] for r in ours) - med(r["objective"] for r in theirs)
            print(f"| {d} | {peer} | {ratio_of_medians:.3f} | {fmt(med(paired))} | {objective_gap:+.5f} |")

    grpc = [r for (d, p), rs in by.items() if p == "topicgroups_grpc" for r in rs]
    if grpc:
        print()
        print("| data | end-to-end s | in-process s | server s | end-to-end / in-process (median of reps) | same groups |")
        print("|---|---|---|---|---|---|")
        for d in sorted({r["dataset"] for r in grpc}):
            rs = [r for r in grpc if r["dataset"] == d]
            print(f"| {d} | {fmt(med(r['end_to_end_seconds'] for r in rs))} | {fmt(med(r['in_process_seconds'] for r in rs))} "
                  f"| {fmt(med(r['server_seconds'] for r in rs))} | {fmt(med(r['end_to_end_over_in_process'] for r in rs))} "
                  f"| {all(r['same_groups'] for r in rs)} |")


if __name__ == "__main__":
    if len(sys.argv) < 2:
        sys.exit(__doc__)
    main(sys.argv[1:])
