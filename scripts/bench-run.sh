#!/usr/bin/env bash
# End-to-end throughput and peak memory of `retinue run` for the Milky-Way-mass default
# (1.2e12 Msun, resolution 10^7.5 Msun, Planck 2018), tests and store included.
# Usage: scripts/bench-run.sh N [THREADS] [isolated|pair]   (prints wall time, rate, CPU time
# (user + system), peak memory and store size; figures go to docs/performance.md
# by hand). With `pair`, the cell holds N pairs (2N hosts) of the same host mass with a partner
# of equal mass 800 kpc away (the Local-Group-like example of configs/paired-hosts.toml), and
# the rate is given in pairs per second.
set -euo pipefail
cd "$(dirname "$0")/.."
n="${1:-100}"
threads="${2:-0}"
kind="${3:-isolated}"
cargo build --release --quiet
dir="$(mktemp -d)"
# the default run with N hosts (seed 5, as the figures in docs/performance.md were measured)
sed -e "s/^hosts_per_cell = .*/hosts_per_cell = $n/" -e "s/^master_seed = .*/master_seed = 5/" \
    -e "s/^output = .*/output = \"bench.h5\"/" configs/milky-way.toml > "$dir/bench.toml"
grep -q "^hosts_per_cell = $n\$" "$dir/bench.toml" || { echo "configs/milky-way.toml has no [run] hosts_per_cell" >&2; exit 1; }
unit="hosts"
if [ "$kind" = pair ]; then
  unit="pairs"
  grep -q '^kind = "isolated"' "$dir/bench.toml" || { echo "configs/milky-way.toml has no [environment] kind" >&2; exit 1; }
  sed -i -e 's/^kind = "isolated".*/kind = "pair"\
partner_mass_ratio = 1.0\
partner_mass_scatter_dex = 0.1\
separation_kpc = 800.0\
separation_scatter_kpc = 50.0\
radial_velocity_kms = -100.0\
radial_velocity_scatter_kms = 15.0\
tangential_velocity_kms = 50.0\
tangential_velocity_scatter_kms = 30.0/' "$dir/bench.toml"
elif [ "$kind" != isolated ]; then
  echo "third argument: isolated or pair, not $kind" >&2; exit 2
fi
start=$(date +%s.%N)
/usr/bin/time -v "${CARGO_TARGET_DIR:-target}/release/retinue" run "$dir/bench.toml" --out "$dir/bench.h5" --threads "$threads" > "$dir/out.txt" 2> "$dir/err.txt"
end=$(date +%s.%N)
rss=$(grep "Maximum resident set size" "$dir/err.txt" | awk '{print $6}')
cpu=$(awk -F': ' '/User time|System time/ {s += $2} END {printf "%.1f", s}' "$dir/err.txt")
el=$(echo "$end - $start" | bc -l)
printf "%s: %s  threads: %s  wall: %.1f s  %s/s: %.2f  CPU: %s s  peak RSS: %.0f MiB  store: %s\n" \
  "$unit" "$n" "$threads" "$el" "$unit" "$(echo "$n / $el" | bc -l)" "$cpu" "$(echo "$rss / 1024" | bc -l)" "$(du -h "$dir/bench.h5" | cut -f1)"
rm -rf "$dir"
