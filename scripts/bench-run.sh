#!/usr/bin/env bash
# End-to-end throughput and peak memory of `retinue run` for the Milky-Way-mass default
# (1.2e12 Msun, resolution 10^7.5 Msun, Planck 2018), tests and store included.
# Usage: scripts/bench-run.sh N_HOSTS [THREADS]   (figures go to docs/performance.md by hand)
set -euo pipefail
cd "$(dirname "$0")/.."
n="${1:-100}"
threads="${2:-0}"
cargo build --release --quiet
dir="$(mktemp -d)"
# the default run with N hosts (seed 5, as the figures in docs/performance.md were measured)
sed -e "s/^hosts_per_cell = .*/hosts_per_cell = $n/" -e "s/^master_seed = .*/master_seed = 5/" \
    -e "s/^output = .*/output = \"bench.h5\"/" configs/milky-way.toml > "$dir/bench.toml"
grep -q "^hosts_per_cell = $n\$" "$dir/bench.toml" || { echo "configs/milky-way.toml has no [run] hosts_per_cell" >&2; exit 1; }
start=$(date +%s.%N)
/usr/bin/time -v "${CARGO_TARGET_DIR:-target}/release/retinue" run "$dir/bench.toml" --out "$dir/bench.h5" --threads "$threads" > "$dir/out.txt" 2> "$dir/err.txt"
end=$(date +%s.%N)
rss=$(grep "Maximum resident set size" "$dir/err.txt" | awk '{print $6}')
el=$(echo "$end - $start" | bc -l)
printf "hosts: %s  threads: %s  wall: %.1f s  hosts/s: %.2f  peak RSS: %.0f MiB  store: %s\n" \
  "$n" "$threads" "$el" "$(echo "$n / $el" | bc -l)" "$(echo "$rss / 1024" | bc -l)" "$(du -h "$dir/bench.h5" | cut -f1)"
rm -rf "$dir"
