#!/usr/bin/env bash
# Side-by-side performance run: the peer scripts of ../shared/peers and
# saddlecheck's benchmarks on the same workload files, one after the other
# on the same machine. Usage (from the repository root):
#
#   testdata/peers/bench.sh WORKDIR
#
# WORKDIR is made by: /usr/bin/python3 ../shared/peers/make_workloads.py WORKDIR
# (needs Debian's python3-numpy, python3-scipy, python3-open3d). Prints the
# raw numbers; README's Performance section quotes the ratios of one run.
set -euo pipefail
work=${1:?usage: testdata/peers/bench.sh WORKDIR}
peers=../shared/peers
here=$(cd "$(dirname "$0")" && pwd)
/usr/bin/python3 "$here/peer_design.py" "$work" > "$work/design.yaml"
cat > "$work/design_mesh.yaml" <<YAML
structure: peer benchmark workload, mesh design (synthetic saddle, not a structure)
units: m
normal: up
patches:
  - id: M
    mesh: design_mesh.stl
tolerance:
  source: "benchmark only: no real requirement"
  limit_mm: 10
YAML
cat > "$work/ts.yaml" <<YAML
instrument:
  kind: total-station
  angle_arcsec: 1
  distance_mm: 1
  distance_ppm: 1.5
  stations:
    - {id: S1, e: 4970.0, n: 2960.0, h: 95.0, instrument_height: 1.6}
control_mm: 1
YAML
echo "== machine"; nproc; grep -m1 'model name' /proc/cpuinfo; uptime
echo "== peers (NumPy/SciPy, Open3D)"
for task in "peer_numpy.py read --input scan_10m.ply" "peer_numpy.py read --input shots_20k.csv" \
            "peer_numpy.py distance --input scan_1m.ply" "peer_numpy.py distance --input scan_10m.ply" \
            "peer_numpy.py fit --input scan_1m.ply" "peer_open3d.py mesh --input scan_10m.ply --sign normal"; do
  set -- $task
  script=$1; shift; sub=$1; shift
  echo "-- $script $sub $*"
  (cd "$peers" && env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE /usr/bin/python3 "$script" "$work" "$sub" "$@") | cut -c1-400
done
echo "== saddlecheck benchmarks"
SADDLECHECK_WORKLOAD=$work go test ./cmd/saddlecheck -run '^$' -bench 'Peer' -benchtime 3x
go test ./cloud/las -run '^$' -bench 'BenchmarkLASRead' -benchtime 30x
go test ./change -run '^$' -bench 'Compare5M' -benchtime 1x
go test ./deviation/mesh -run '^$' -bench 'BVHBuild' -benchtime 3x
echo "== check on 10M points: memory, and the cost of uncertainty propagation"
go build -o "$work/saddlecheck" ./cmd/saddlecheck
/usr/bin/time -v "$work/saddlecheck" check --design "$work/design.yaml" --points "$work/scan_10m.ply" --out "$work/out-check" 2>&1 | grep -E "Maximum resident|Elapsed|points read" || true
for mode in none ts; do
  extra=()
  [ "$mode" = ts ] && extra=(--uncertainty "$work/ts.yaml")
  "$work/saddlecheck" check --no-fit --design "$work/design.yaml" --points "$work/scan_10m.ply" --out "$work/out-$mode" "${extra[@]}" > /dev/null || true
  echo "uncertainty=$mode: $(python3 -c "import json,sys; print(json.load(open(sys.argv[1]))['timings_s'])" "$work/out-$mode/summary.json")"
done
