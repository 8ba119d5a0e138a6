#!/usr/bin/env bash
# The sparse GAT layer's speed as a fraction of this machine's random-gather limit, both measured in
# one run: alternates the C random-gather probe benchmarks/probe/random-gather.c (256 MiB table of
# 256-byte rows, 2 threads) with the JMH benchmark of the layer (R-MAT 1M nodes, 8 heads x 8 dims, 2
# threads), so that each JMH result sits between two gather measurements taken minutes apart.
# A shared machine's limits move between minutes; quote the median of the ratios. The probe asks
# for transparent huge pages (HUGE_PAGES=1), as the benchmark's forks do
# (-XX:+UseTransparentHugePages): without them its rows cost a page walk each and the limit reads
# 1.2-1.4x lower on the reference guest (results/raw/node-rows-order/limits-stream-gather-idle.txt).
#
# Usage: benchmarks/sparse-vs-gather.sh [rounds] [output folder]
#   needs benchmarks/target/benchmarks.jar (mvn -B -pl benchmarks -am package -DskipTests), a C
#   compiler (cc, or the one named in CC) and python3. The output folder defaults to
#   benchmarks/target/sparse-vs-gather-<UTC time>; copy a run into benchmarks/results/raw/ only when
#   a published figure rests on it (DEVELOPERS.md, "Benchmarks").
#   HEED_BENCH_JVM_ARGS, if set, replaces the benchmark's fork JVM options (JMH -jvmArgsAppend);
#   for example, the defaults with a larger heap:
#   HEED_BENCH_JVM_ARGS="--add-modules jdk.incubator.vector -Xms8g -Xmx8g \
#     -XX:+UseTransparentHugePages"
set -euo pipefail
rounds=${1:-3}
here=$(cd "$(dirname "$0")" && pwd)
out=${2:-$here/target/sparse-vs-gather-$(date -u +%Y%m%d-%H%M)}
jar="$here/target/benchmarks.jar"
[ -f "$jar" ] || { echo "build $jar first: mvn -B -pl benchmarks -am package -DskipTests" >&2; exit 2; }
probe_src="$here/probe/random-gather.c"
cc=${CC:-cc}
command -v "$cc" >/dev/null 2>&1 || {
  echo "no C compiler '$cc' on the PATH: the gather probe $probe_src needs one" \
    "(for example: apt-get install gcc, or set CC=clang)" >&2
  exit 2
}
command -v python3 >/dev/null 2>&1 || { echo "python3 is needed to summarise the rounds" >&2; exit 2; }
mkdir -p "$out" "$here/target/probe"
probe="$here/target/probe/random-gather"
# -march=native where the compiler takes it (the probe should use the machine's widest loads)
"$cc" -O3 -march=native -pthread -o "$probe" "$probe_src" 2>/dev/null \
  || "$cc" -O3 -pthread -o "$probe" "$probe_src" \
  || { echo "could not compile $probe_src with $cc" >&2; exit 2; }
gather() {
  HUGE_PAGES=1 "$probe" 256 2 > "$out/c-gather-$1.txt"
}
for k in $(seq "$rounds"); do
  gather "$k"
  extra=()
  if [ -n "${HEED_BENCH_JVM_ARGS:-}" ]; then extra=(-jvmArgsAppend "$HEED_BENCH_JVM_ARGS"); fi
  java -jar "$jar" CsrAttentionBenchmark -p graph=rmat -p nodes=1048576 -p score=additive \
    -p implementation=vector -p threads=2 -f 1 -wi 3 -i 5 -w 2s -r 2s "${extra[@]}" \
    -rf json -rff "$out/jmh-sparse-rmat-$k.json" > "$out/jmh-sparse-rmat-$k.log" 2>&1
done
gather $((rounds + 1))
python3 - "$out" "$rounds" <<'PY'
import json, re, statistics, sys
out, rounds = sys.argv[1], int(sys.argv[2])
ratios = []
for k in range(1, rounds + 1):
    result = json.load(open(f"{out}/jmh-sparse-rmat-{k}.json"))[0]
    edges = 17132183  # R-MAT scale 20, edge factor 16, seed 20260401, self-loops added
    times = [t for fork in result["primaryMetric"]["rawData"] for t in fork]
    ms = statistics.median(times)
    rate = edges / ms / 1e3
    gathers = [float(re.search(r"Mrows/s median=([0-9.]+)", open(f"{out}/c-gather-{i}.txt").read()).group(1))
               for i in (k, k + 1)]
    ratio = rate / statistics.mean(gathers)
    ratios.append(ratio)
    print(f"round {k}: layer {ms:.0f} ms = {rate:.1f} M edges/s; gather {gathers[0]:.1f} and "
          f"{gathers[1]:.1f} M rows/s; {100 * ratio:.1f} %")
print(f"median of {rounds} ratios: {100 * statistics.median(ratios):.1f} %")
PY
