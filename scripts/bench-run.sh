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
sed -e "s/^hosts_per_cell = .*/hosts_per_cell = $n/" -e "s/^output = .*/output = \"bench.h5\"/" configs/milky-way.toml > "$dir/bench.toml"
grep -q '^\[run\]' "$dir/bench.toml" || printf '[run]\nhosts_per_cell = %s\nmaster_seed = 5\n\n%s' "$n" "$(cat "$dir/bench.toml")" > "$dir/b2.toml" && mv "$dir/b2.toml" "$dir/bench.toml" 2>/dev/null || true
start=$(date +%s.%N)
/usr/bin/time -v "${CARGO_TARGET_DIR:-target}/release/retinue" run "$dir/bench.toml" --out "$dir/bench.h5" --threads "$threads" > "$dir/out.txt" 2> "$dir/err.txt"
end=$(date +%s.%N)
rss=$(grep "Maximum resident set size" "$dir/err.txt" | awk '{print $6}')
el=$(echo "$end - $start" | bc -l)
printf "hosts: %s  threads: %s  wall: %.1f s  hosts/s: %.2f  peak RSS: %.0f MiB  store: %s\n" \
  "$n" "$threads" "$el" "$(echo "$n / $el" | bc -l)" "$(echo "$rss / 1024" | bc -l)" "$(du -h "$dir/bench.h5" | cut -f1)"
rm -rf "$dir"
