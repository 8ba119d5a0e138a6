#!/usr/bin/env bash
# A/B of the sparse GAT layer's variants by CPU time per call (dev.heed.bench.kernel.CsrLayerCpu):
# node rows float32 / bfloat16, locality order none / degree / rcm, one JVM per variant, the
# variants alternated round by round (their order rotates), on the R-MAT 1M graph or the demo graph.
#
# Usage: benchmarks/layer-cpu-ab.sh [rounds=5] [graph=rmat] [output file] [variants...]
#   variants are rows:order pairs, default float32:none bfloat16:none float32:rcm bfloat16:rcm
#   float32:degree bfloat16:degree; rows:order@NAME=CLASSPATH runs that variant with CLASSPATH ahead
#   of the jar (another build's classes or jar, to A/B two builds) and reports it as rows:order@NAME.
#   Needs benchmarks/target/benchmarks.jar. The output defaults to
#   benchmarks/target/layer-cpu-<graph>-<UTC time>.txt; a summary of medians and ratios follows.
#   WARMUP and CALLS (default 8 and 15) set the untimed and timed calls per JVM; CPU_STAT=mean
#   summarises the mean CPU per call instead of the median (the CPU clock ticks in 10 ms here).
set -euo pipefail
rounds=${1:-5}
graph=${2:-rmat}
here=$(cd "$(dirname "$0")" && pwd)
out=${3:-$here/target/layer-cpu-$graph-$(date -u +%Y%m%d-%H%M).txt}
shift $(( $# < 3 ? $# : 3 ))
variants=("$@")
[ ${#variants[@]} -gt 0 ] || variants=(float32:none bfloat16:none float32:rcm bfloat16:rcm float32:degree bfloat16:degree)
jar="$here/target/benchmarks.jar"
[ -f "$jar" ] || { echo "build $jar first: mvn -B -pl benchmarks -am package -DskipTests" >&2; exit 2; }
mkdir -p "$(dirname "$out")"
{ date -u; uptime; lscpu | grep -E 'Model name|^CPU\(s\)'; java -version 2>&1 | head -1; } > "$out"
count=${#variants[@]}
for k in $(seq "$rounds"); do
  for x in $(seq 0 $(( count - 1 ))); do
    v=${variants[$(( (x + k) % count ))]}
    build=""
    cp="${HEED_BENCH_CP:+$HEED_BENCH_CP:}$jar"
    if [[ $v == *@*=* ]]; then
      build=${v#*@}
      cp="${build#*=}:$cp"
      build="@${build%%=*}"
      v=${v%%@*}
    fi
    java --add-modules jdk.incubator.vector -Xms5g -Xmx5g -XX:+UseTransparentHugePages -cp "$cp" \
      dev.heed.bench.kernel.CsrLayerCpu "$graph" "${v%%:*}" "${v##*:}" 2 "${WARMUP:-8}" "${CALLS:-15}" 2>/dev/null \
      | sed "s/^/round=$k /; s/ order=\([^ ]*\)/ order=\1$build/" >> "$out"
  done
done
python3 - "$out" "${CPU_STAT:-median}" <<'PY'
import re, statistics, sys
rows = {}
order_cost = {}
mean = len(sys.argv) > 2 and sys.argv[2] == "mean"  # short calls: the mean CPU per call
for line in open(sys.argv[1]):
    m = re.search(r"rows=(\S+) order=(\S+) .*order-wall-ms=([0-9.]+) order-cpu-ms=([0-9.]+) cpu-ms-median=([0-9.]+) wall-ms-median=([0-9.]+)(?: cpu-ms-mean=([0-9.]+))?", line)
    if m:
        key = (m.group(1), m.group(2))
        cpu = float(m.group(7)) if m.group(7) and mean else float(m.group(5))
        rows.setdefault(key, []).append((cpu, float(m.group(6))))
        order_cost.setdefault(m.group(2), []).append((float(m.group(3)), float(m.group(4))))
edges = {"rmat": 17132183}
base = rows.get(("float32", "none"))
print("variant: median over rounds of per-JVM " + ("mean" if mean else "median") + " CPU ms / median wall ms per call")
for key, vals in sorted(rows.items()):
    cpu = statistics.median(v[0] for v in vals)
    wall = statistics.median(v[1] for v in vals)
    line = f"{key[0]:8s} {key[1]:6s} cpu {cpu:8.1f} ms  wall {wall:8.1f} ms  ({len(vals)} JVMs)"
    if base:
        line += f"  cpu speed-up vs float32/none {statistics.median(v[0] for v in base) / cpu:.3f}"
    print(line)
for order, vals in sorted(order_cost.items()):
    print(f"order {order}: wall {statistics.median(v[0] for v in vals):.1f} ms, cpu {statistics.median(v[1] for v in vals):.1f} ms (once per graph)")
PY
