#!/usr/bin/env bash
# Side-by-side timing: our `bench` command and the reference libraries (FAISS, scikit-learn, via
# ../shared/peers/peers.py) on the same seeded synthetic data, interleaved rep by rep, then medians
# and ratios (bench/summarise-peers.py).
#
#   bench/run-peers.sh [--reps R] [--data DIR] [--out FILE] [--iterations I] [--threads T] [--] SET...
#
# SET is one of
#   S  M  L        gen.py presets: 20k x 384 k=32, 100k x 384 k=100, 300k x 768 k=200 (cos to own centre ~0.6)
#   Sh Mh Lh       the same shapes, harder: --centre-corr 0.3 --mean-cos 0.5 (centres share a direction)
#   Mgrpc          M through the gRPC service hosted in-process (bench --through-service), ours only
# Default sets: S M Sh Mh Mgrpc. Peers on L/Lh: faiss_full only (scikit-learn would take minutes per run);
# set PEERS_L="faiss_full sk_lloyd" to add it. Before each run it waits up to QUIET_WAIT seconds (default 60)
# for other processes to use under QUIET_CORES cores (default 0.3); each line records what it found.
# Needs: the .NET SDK; Debian's python3-numpy python3-faiss python3-sklearn and an optimised BLAS for them:
#   apt-get update && apt-get install -y python3-numpy python3-faiss python3-sklearn libopenblas0-pthread
# (without libopenblas0-pthread, Debian's reference BLAS serves FAISS and scikit-learn: FAISS then took 61 s
# instead of 2.8 s on 100k x 384, k = 100 here, a comparison that would flatter us).
set -euo pipefail
repo="$(cd "$(dirname "$0")/.." && pwd)"
peers_dir="${PEERS_DIR:-$repo/../shared/peers}"
reps=3
data="${BENCH_DATA:-/tmp/topicgroups-bench-data}"
out=""
iterations=20
threads=""
quiet_wait="${QUIET_WAIT:-60}"     # seconds to wait for a quiet machine before each run
quiet_cores="${QUIET_CORES:-0.3}"
sets=()
while [ $# -gt 0 ]; do
  case "$1" in
    --reps) reps="$2"; shift 2 ;;
    --data) data="$2"; shift 2 ;;
    --out) out="$2"; shift 2 ;;
    --iterations) iterations="$2"; shift 2 ;;
    --threads) threads="$2"; shift 2 ;;
    --) shift; sets+=("$@"); break ;;
    -h|--help) sed -n '2,16p' "$0"; exit 0 ;;
    *) sets+=("$1"); shift ;;
  esac
done
[ ${#sets[@]} -eq 0 ] && sets=(S M Sh Mh Mgrpc)
[ -n "$out" ] || out="$data/results-$(date +%Y%m%d-%H%M%S).jsonl"
mkdir -p "$data"

for tool in /usr/bin/python3 dotnet; do command -v "$tool" >/dev/null || { echo "missing $tool" >&2; exit 1; }; done
/usr/bin/python3 -c 'import numpy, faiss, sklearn' 2>/dev/null || {
  echo "needs Debian's python3-numpy python3-faiss python3-sklearn (apt-get install -y ...)" >&2; exit 1; }
readlink -f /usr/lib/x86_64-linux-gnu/libblas.so.3 | grep -q openblas || {
  echo "the BLAS behind libblas.so.3 is not OpenBLAS: install libopenblas0-pthread so the peers run at their best" >&2; exit 1; }

# Built once, Release, into its own folder.
build="${BENCH_BUILD:-/tmp/topicgroups-bench-build}"
echo "building the CLI (Release) into $build ..." >&2
dotnet build "$repo/src/TopicGroups.Cli" -c Release --artifacts-path "$build" -v quiet -nologo >&2
cli="$build/bin/TopicGroups.Cli/release/topicgroups"

shape() {  # name -> "n d k"
  case "${1%h}" in
    S) echo "20000 384 32" ;; M|Mgrpc) echo "100000 384 100" ;; L) echo "300000 768 200" ;;
    *) echo "unknown set $1" >&2; exit 2 ;;
  esac
}

dataset() {  # set -> data file name stem (Mgrpc shares M's file)
  case "$1" in Mgrpc) echo M ;; *) echo "$1" ;; esac
}

generate() {
  local name; name="$(dataset "$1")"
  [ -f "$data/${name}_X.npy" ] && return
  read -r n d k <<<"$(shape "$name")"
  if [[ "$name" == *h ]]; then
    /usr/bin/python3 "$peers_dir/gen.py" --name "$name" --n "$n" --d "$d" --k "$k" --seed 42 \
      --centre-corr 0.3 --mean-cos 0.5 --out-dir "$data" >&2
  else
    /usr/bin/python3 "$peers_dir/gen.py" "$name" --seed 42 --out-dir "$data" >&2
  fi
}

load1() { cut -d' ' -f1 /proc/loadavg; }

# Cores kept busy by other processes over one second (from /proc/stat), like peers.py's contention check.
busy_cores() {
  /usr/bin/python3 - <<'PY'
import os, time
def busy():
    with open("/proc/stat") as f:
        v = [int(x) for x in f.readline().split()[1:9]]
    return (v[0] + v[1] + v[2] + v[5] + v[6] + v[7]) / os.sysconf("SC_CLK_TCK")
b, t = busy(), time.perf_counter()
time.sleep(1.0)
print(round((busy() - b) / (time.perf_counter() - t), 2))
PY
}

# Wait (at most $quiet_wait seconds) until other processes use less than $quiet_cores cores.
wait_quiet() {
  local waited=0 cores
  cores="$(busy_cores)"
  while /usr/bin/python3 -c "import sys; sys.exit(0 if float(sys.argv[1]) >= float(sys.argv[2]) else 1)" "$cores" "$quiet_cores" \
        && [ "$waited" -lt "$quiet_wait" ]; do
    sleep 2; waited=$((waited + 3)); cores="$(busy_cores)"
  done
  echo "$cores"
}

# One JSON line of ours, tagged like the peers' lines.
ours() {  # set rep
  local set="$1" rep="$2" name; name="$(dataset "$set")"
  read -r n d k <<<"$(shape "$name")"
  local extra=()
  [ "$set" = Mgrpc ] && extra+=(--through-service)
  [ -n "$threads" ] && extra+=(--threads "$threads")
  local before busy; before="$(load1)"; busy="$(wait_quiet)"
  local line
  line="$("$cli" bench --embeddings "$data/${name}_X.npy" --groups "$k" --iterations "$iterations" --seed 0 "${extra[@]}")"
  /usr/bin/python3 -c 'import json,sys; r=json.loads(sys.argv[1]); r.update(peer=sys.argv[2], dataset=sys.argv[3], rep=int(sys.argv[4]), load1_before=float(sys.argv[5]), pre_other_cores=float(sys.argv[6])); print(json.dumps(r))' \
    "$line" "topicgroups$([ "$set" = Mgrpc ] && echo _grpc)" "$set" "$rep" "$before" "$busy"
}

peer() {  # set rep peer
  local set="$1" rep="$2" which="$3"
  read -r n d k <<<"$(shape "$set")"
  local thread_args=()
  [ -n "$threads" ] && thread_args+=(--threads "$threads")
  # As ../shared/peers/README.md says: OpenBLAS runs fastest here with these two unset and passive OpenMP waits.
  env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE OMP_WAIT_POLICY=PASSIVE \
    /usr/bin/python3 "$peers_dir/peers.py" "$data/${set}_X.npy" --k "$k" --iters "$iterations" --seed 0 \
    --peer "$which" --reps 1 --tag "rep$rep" --quiet-wait "$quiet_wait" --quiet-cores "$quiet_cores" "${thread_args[@]}" \
    | /usr/bin/python3 -c 'import json,sys
for l in sys.stdin:
    r=json.loads(l); r["dataset"]=sys.argv[1]; r["rep"]=int(sys.argv[2]); print(json.dumps(r))' "$set" "$rep"
}

for set in "${sets[@]}"; do generate "$set"; done
echo "machine: $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ *//'), $(nproc) cores; load $(cat /proc/loadavg)" >&2
echo "results: $out" >&2

for rep in $(seq 1 "$reps"); do
  for set in "${sets[@]}"; do
    echo "rep $rep/$reps: $set ..." >&2
    ours "$set" "$rep" | tee -a "$out" >/dev/null
    [ "$set" = Mgrpc ] && continue
    case "$set" in
      L|Lh) peers_here="${PEERS_L:-faiss_full}" ;;
      *) peers_here="faiss_full sk_lloyd" ;;
    esac
    for p in $peers_here; do peer "$set" "$rep" "$p" | tee -a "$out" >/dev/null; done
  done
done

/usr/bin/python3 "$repo/bench/summarise-peers.py" "$out"
