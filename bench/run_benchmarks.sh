#!/bin/sh
# Runs the benchmarks of one build in the same session and prints a comparison table:
# the least-squares cylinder (bench_fit_cylinder) against scipy.optimize.least_squares with an
# analytic Jacobian on the same bore geometry (scipy_fit_cylinder.py), and, when it was built,
# the point-file reader benchmark (bench_read_points).
#
#   bench/run_benchmarks.sh [BUILD_DIR] [--sizes 1000,10000,100000,1000000]
#
# Timings are wall-clock best and median of several runs; on a shared machine compare the best
# figures (and the C++ CPU column) rather than the medians.
set -eu

here=$(cd "$(dirname "$0")" && pwd)
build=${1:-"$here/../build"}
[ $# -gt 0 ] && shift
sizes=1000,10000,100000,1000000
if [ "${1:-}" = "--sizes" ] && [ $# -ge 2 ]; then sizes=$2; fi
python=/usr/bin/python3  # Debian's interpreter, with numpy and scipy

cpp=$build/bench/bench_fit_cylinder
if [ ! -x "$cpp" ]; then
  echo "run_benchmarks.sh: $cpp not found; build the target bench_fit_cylinder first" >&2
  exit 2
fi

tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

echo "machine: $(nproc) cores, $(uname -m); load average: $(cut -d' ' -f1-3 /proc/loadavg)"
"$cpp" --sizes "$sizes" > "$tmp/cpp.txt"
"$python" "$here/scipy_fit_cylinder.py" --sizes "$sizes" > "$tmp/scipy.txt"

echo
echo "least-squares cylinder, tilted bore off the origin, 1 um noise (times in ms)"
awk '
  FNR == 1 { file++ }
  /^#/ { next }
  file == 1 { cb[$1] = $2; cm[$1] = $3; cns[$1] = $4; ccpu[$1] = $5; order[++n] = $1 }
  file == 2 { sb[$1] = $2; sm[$1] = $3 }
  END {
    printf "%10s %10s %10s %10s %10s %12s %12s %8s %8s\n", "points", "cpp_best", "cpp_median",
           "cpp_ns/pt", "cpp_cpu", "scipy_best", "scipy_median", "ratio", "ratio_md"
    for (i = 1; i <= n; i++) {
      k = order[i]
      if (!(k in sb)) continue
      printf "%10d %10.3f %10.3f %10.2f %10.3f %12.3f %12.3f %7.1fx %7.1fx\n", k, cb[k], cm[k],
             cns[k], ccpu[k], sb[k], sm[k], sb[k] / cb[k], sm[k] / cm[k]
    }
  }' "$tmp/cpp.txt" "$tmp/scipy.txt"
echo "ratio = scipy best / C++ best; ratio_md = the same for medians"

reader=$build/bench/bench_read_points
if [ -x "$reader" ]; then
  echo
  echo "point-file reader (bench_read_points)"
  "$reader"
fi

for extra in bench_fit_chebyshev bench_stray_points bench_evaluate_part bench_monte_carlo; do
  if [ -x "$build/bench/$extra" ]; then
    echo
    echo "$extra"
    "$build/bench/$extra"
  fi
done

# A whole-part scan end to end (bench_scan): 5,000,000 points with 8 bores written once as a
# binary PLY of doubles, then read, segmented and evaluated under /usr/bin/time -v for the
# system's maximum resident set size. The cloud takes 120 MB in the temporary folder.
scan=$build/bench/bench_scan
if [ -x "$scan" ]; then
  echo
  echo "bench_scan (5,000,000 points, 8 bores, binary PLY)"
  "$scan" generate "$tmp/scan" 5000000 ply > /dev/null
  if [ -x /usr/bin/time ]; then
    /usr/bin/time -v "$scan" run "$tmp/scan" --threads "$(nproc)" 2> "$tmp/scan-time.txt"
    grep -E "Maximum resident set size|Elapsed \(wall clock\)|User time|System time" \
      "$tmp/scan-time.txt"
    # The evaluation stage by stage on one thread (ns a point: which stage is not linear).
    "$scan" run "$tmp/scan" --threads "$(nproc)" --stages | sed -n '/stage by stage/,$p'
    # The load stage step by step (its own run: the breakdown keeps figures alive).
    "$scan" run "$tmp/scan" --threads "$(nproc)" --phases | sed -n '/load stage by stage/,$p'
  else
    "$scan" run "$tmp/scan" --threads "$(nproc)"
  fi
fi
