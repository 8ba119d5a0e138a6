#!/usr/bin/env bash
# Local-mode throughput of attention-spark beside single-machine Heed on the same graph:
#   benchmarks/spark-local.sh GRAPH ROUNDS CORES [OUT]
# GRAPH is demo (the bundled payments network, scored with the bundled demo model) or
# rmat:SCALE:EDGE_FACTOR (Graph500 R-MAT, a two-layer GAT 8 heads x 8 over 64 features). Each
# round scores the graph on one machine (one kernel thread) and then in Spark's local[CORES];
# OUT (default benchmarks/target/spark-local-GRAPH-CORES.csv) gets seconds and shuffle bytes per
# layer, OUT's .log the per-phase log. HEAP (default 12g) is the JVM's heap: in local mode the
# driver's and the executors'; JAVA_OPTS adds JVM options (a profiler's, for example). The JVM flags are the ones spark-submit passes on JDK 17+.
set -euo pipefail
cd "$(dirname "$0")/.."
graph=${1:-demo}; rounds=${2:-3}; cores=${3:-1}
out=${4:-benchmarks/target/spark-local-${graph//:/-}-${cores}.csv}
mkdir -p "$(dirname "$out")"
nice -n 10 mvn -B -q -o -pl attention-spark -am test-compile dependency:build-classpath \
  -Dmdep.outputFile=target/test-classpath.txt -Dmdep.includeScope=test
opens=""
for p in java.lang java.lang.invoke java.lang.reflect java.io java.net java.nio java.util \
         java.util.concurrent java.util.concurrent.atomic jdk.internal.ref sun.nio.ch sun.nio.cs \
         sun.security.action sun.util.calendar; do
  opens="$opens --add-opens=java.base/$p=ALL-UNNAMED"
done
# shellcheck disable=SC2086
nice -n 10 java -Xmx"${HEAP:-12g}" ${JAVA_OPTS:-} --add-modules jdk.incubator.vector $opens -Djdk.reflect.useDirectMethodHandle=false \
  -Dio.netty.tryReflectionSetAccessible=true \
  -cp "attention-spark/target/test-classes:attention-spark/target/classes:$(cat attention-spark/target/test-classpath.txt)" \
  dev.heed.spark.bench.LocalModeThroughput "$graph" "$rounds" "$cores" "$out" \
  2> >(tee "${out%.csv}.log" >&2)
echo "wrote $out"
