#!/usr/bin/env bash
# Local-mode throughput of attention-spark beside single-machine Heed on the same graph:
#   benchmarks/spark-local.sh GRAPH ROUNDS CORES [OUT]
# GRAPH is demo (the bundled payments network) or rmat:SCALE:EDGE_FACTOR. Each round scores the
# graph with the bundled demo model on one machine (one kernel thread) and then in Spark's
# local[CORES]; OUT (default benchmarks/target/spark-local-GRAPH-CORES.csv) gets seconds and
# shuffle bytes per layer. The JVM flags are the ones spark-submit passes on JDK 17+.
set -euo pipefail
cd "$(dirname "$0")/.."
graph=${1:-demo}; rounds=${2:-3}; cores=${3:-1}
out=${4:-benchmarks/target/spark-local-${graph//:/-}-${cores}.csv}
mkdir -p "$(dirname "$out")"
mvn -B -q -o -pl attention-spark -am test-compile dependency:build-classpath \
  -Dmdep.outputFile=target/test-classpath.txt -Dmdep.includeScope=test
opens=""
for p in java.lang java.lang.invoke java.lang.reflect java.io java.net java.nio java.util \
         java.util.concurrent java.util.concurrent.atomic jdk.internal.ref sun.nio.ch sun.nio.cs \
         sun.security.action sun.util.calendar; do
  opens="$opens --add-opens=java.base/$p=ALL-UNNAMED"
done
java -Xmx8g --add-modules jdk.incubator.vector $opens -Djdk.reflect.useDirectMethodHandle=false \
  -Dio.netty.tryReflectionSetAccessible=true \
  -cp "attention-spark/target/test-classes:attention-spark/target/classes:$(cat attention-spark/target/test-classpath.txt)" \
  dev.heed.spark.bench.LocalModeThroughput "$graph" "$rounds" "$cores" "$out"
echo "wrote $out"
