#!/usr/bin/env bash
# Start-up A/B of `heed classify --demo`: wall, user and system CPU of whole runs (one JVM each),
# the variants alternated round by round (their order rotates), with the load average before each
# run, and the predictions of every run compared byte for byte with the first run's.
#
# Usage: benchmarks/start-up.sh BASELINE_LAUNCHER [rounds=4] [output dir]
#   Variants: "baseline" (BASELINE_LAUNCHER, e.g. a copy of ./heed pointing at an older jar),
#   "no-cds" (./heed with HEED_CDS=off) and "cds" (./heed with its class-data archive, written by
#   an untimed run first). The demo files are prepared by an untimed run first. Output: runs.tsv
#   (one line per run), predictions-*.csv, and a summary of medians on stdout.
set -euo pipefail
baseline=${1:?baseline launcher}
rounds=${2:-4}
here=$(cd "$(dirname "$0")/.." && pwd)
out=${3:-$here/benchmarks/target/start-up-$(date -u +%Y%m%d-%H%M)}
mkdir -p "$out"
{ date -u; uptime; lscpu | grep -E 'Model name|^CPU\(s\)'; java -version 2>&1 | head -1; } > "$out/machine.txt"
"$here/heed" classify --demo --out "$out/predictions-reference.csv" >/dev/null 2>&1
variants=(baseline no-cds cds)
printf 'round\tvariant\tload1\twall_s\tuser_s\tsys_s\tsame_predictions\n' > "$out/runs.tsv"
for k in $(seq "$rounds"); do
  for x in 0 1 2; do
    v=${variants[$(( (x + k) % 3 ))]}
    case $v in
      baseline) cmd=("$baseline") env=() ;;
      no-cds) cmd=("$here/heed") env=(HEED_CDS=off) ;;
      cds) cmd=("$here/heed") env=() ;;
    esac
    load=$(cut -d' ' -f1 /proc/loadavg)
    env "${env[@]}" /usr/bin/time -f '%e %U %S' -o "$out/time.txt" \
      "${cmd[@]}" classify --demo --out "$out/predictions-$v-$k.csv" >/dev/null 2>"$out/stderr-$v-$k.txt"
    same=no
    cmp -s "$out/predictions-reference.csv" "$out/predictions-$v-$k.csv" && same=yes
    read -r wall user sys < "$out/time.txt"
    printf '%s\t%s\t%s\t%s\t%s\t%s\t%s\n' "$k" "$v" "$load" "$wall" "$user" "$sys" "$same" >> "$out/runs.tsv"
  done
done
rm -f "$out/time.txt"
echo "medians over $rounds rounds ($out/runs.tsv):"
for v in "${variants[@]}"; do
  awk -F'\t' -v v="$v" '$2 == v { w[n] = $4; c[n] = $5 + $6; l[n] = $3; n++ }
    function med(a, n,   i, j, t) { for (i = 0; i < n; i++) for (j = i + 1; j < n; j++)
      if (a[j] < a[i]) { t = a[i]; a[i] = a[j]; a[j] = t }
      return n % 2 ? a[int(n / 2)] : (a[n / 2 - 1] + a[n / 2]) / 2 }
    END { printf "  %-8s wall %.2f s  cpu %.2f s  load %.1f\n", v, med(w, n), med(c, n), med(l, n) }' \
    "$out/runs.tsv"
done
