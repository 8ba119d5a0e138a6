#!/usr/bin/env bash
# Start-up A/B of `heed classify --demo`: wall, user and system CPU of whole runs (one JVM each),
# the variants alternated round by round (their order rotates), with the load average before each
# run, the first layer's seconds from the summary on stderr, and the predictions of every run
# compared with a reference run's (byte for byte, else the number of changed labels and the largest
# difference of a printed probability).
#
# Usage:
#   benchmarks/start-up.sh BASELINE_LAUNCHER [rounds=4] [output dir]
#     Variants: "baseline" (BASELINE_LAUNCHER, e.g. a copy of ./heed beside an older jar),
#     "no-cds" (./heed with HEED_CDS=off) and "cds" (./heed with its class-data archive).
#   benchmarks/start-up.sh --compare [rounds=4] [output dir] NAME 'COMMAND' [NAME 'COMMAND' ...]
#     Variants given as names and launcher command lines, e.g.
#     base '/tmp/old/heed' new './heed' serial 'HEED_JAVA_OPTS=-XX:+UseSerialGC ./heed'.
# START_UP_NO_OUT=1 runs `heed classify --demo` without --out (predictions then not compared;
# standard output is kept per run). The demo files, the archives and the reference predictions
# come from untimed runs first. Output: runs.tsv (one line per run), predictions-*.csv, stdout-*
# and stderr-* per run, and a summary of medians on stdout.
set -euo pipefail
here=$(cd "$(dirname "$0")/.." && pwd)
names=()
commands=()
if [ "${1:-}" = "--compare" ]; then
  shift
  rounds=${1:-4}
  out=${2:-}
  shift 2 || true
  while [ $# -ge 2 ]; do names+=("$1"); commands+=("$2"); shift 2; done
  [ ${#names[@]} -ge 1 ] || { echo "usage: $0 --compare ROUNDS DIR NAME 'COMMAND' ..." >&2; exit 2; }
else
  baseline=${1:?baseline launcher}
  rounds=${2:-4}
  out=${3:-}
  names=(baseline no-cds cds)
  commands=("$baseline" "HEED_CDS=off $here/heed" "$here/heed")
fi
out=${out:-$here/benchmarks/target/start-up-$(date -u +%Y%m%d-%H%M)}
mkdir -p "$out"
{ date -u; uptime; lscpu | grep -E 'Model name|^CPU\(s\)'; java -version 2>&1 | head -1; } > "$out/machine.txt"
for i in "${!names[@]}"; do # untimed: demo files, class-data archives
  bash -c "${commands[$i]} classify --demo" >/dev/null 2>&1
done
bash -c "${commands[0]} classify --demo --out $out/predictions-reference.csv" >/dev/null 2>&1
printf 'round\tvariant\tload1\twall_s\tuser_s\tsys_s\tlayer0_s\tpredictions\n' > "$out/runs.tsv"
n=${#names[@]}
for k in $(seq "$rounds"); do
  for x in $(seq 0 $((n - 1))); do
    i=$(( (x + k) % n ))
    v=${names[$i]}
    target=""
    [ -n "${START_UP_NO_OUT:-}" ] || target="--out $out/predictions-$v-$k.csv"
    load=$(cut -d' ' -f1 /proc/loadavg)
    /usr/bin/time -f '%e %U %S' -o "$out/time.txt" bash -c "${commands[$i]} classify --demo $target" \
      >"$out/stdout-$v-$k.txt" 2>"$out/stderr-$v-$k.txt"
    read -r wall user sys < "$out/time.txt"
    layer0=$(awk '$1 == "0" && $3 ~ /attention/ { print $5; exit }' "$out/stderr-$v-$k.txt")
    same=not-written
    if [ -z "${START_UP_NO_OUT:-}" ]; then
      if cmp -s "$out/predictions-reference.csv" "$out/predictions-$v-$k.csv"; then
        same=identical
      else # labels changed, largest difference of a probability column (columns 3 on)
        same=$(awk -F, 'NR == FNR { line[FNR] = $0; next }
          { split(line[FNR], r, ","); if (r[2] != $2) labels++
            for (c = 3; c <= NF; c++) { d = r[c] - $c; if (d < 0) d = -d; if (d > max) max = d } }
          END { printf "labels-changed=%d,max-diff=%.6f", labels, max }' \
          "$out/predictions-reference.csv" "$out/predictions-$v-$k.csv")
      fi
    fi
    printf '%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n' "$k" "$v" "$load" "$wall" "$user" "$sys" "${layer0:--}" \
      "$same" >> "$out/runs.tsv"
  done
done
rm -f "$out/time.txt"
echo "medians over $rounds rounds ($out/runs.tsv):"
for v in "${names[@]}"; do
  awk -F'\t' -v v="$v" 'BEGIN { n = 0 } $2 == v { w[n] = $4; c[n] = $5 + $6; l[n] = $3; f[n] = $7; n++ }
    function med(a, n,   i, j, t) { for (i = 0; i < n; i++) for (j = i + 1; j < n; j++)
      if (a[j] < a[i]) { t = a[i]; a[i] = a[j]; a[j] = t }
      return n % 2 ? a[int(n / 2)] : (a[n / 2 - 1] + a[n / 2]) / 2 }
    END { printf "  %-10s wall %.2f s  cpu %.2f s  first layer %.3f s  load %.1f\n", v, med(w, n),
      med(c, n), med(f, n), med(l, n) }' "$out/runs.tsv"
done
