#!/usr/bin/env bash
# Throughput and latency of the scoring service example under closed-loop HTTP clients:
#   benchmarks/service-load.sh [CLIENTS] [SECONDS] [ROUNDS] [WARMUP] [THREADS] [OUT]
# CLIENTS is a comma-separated list (default 8,32,64); each count runs SECONDS (default 10), the
# whole list ROUNDS times (default 2) after WARMUP seconds (default 5) not recorded. THREADS is the
# service's computing threads (default: the processors). OUT (default
# benchmarks/target/service-load.csv) gets requests per second and p50/p90/p99 latency per count and
# request kind, with the load average before and after. The clients run in the service's JVM, on
# the same cores. The harness is dev.heed.examples.ScoringServiceLoadRun (examples' test sources).
set -euo pipefail
cd "$(dirname "$0")/.."
mvn -B -q -pl examples -am -Djacoco.skip=true test-compile dependency:build-classpath \
  -Dmdep.outputFile=target/test-classpath.txt -Dmdep.includeScope=test
java --add-modules jdk.incubator.vector -Xmx4g \
  -cp "examples/target/test-classes:examples/target/classes:$(cat examples/target/test-classpath.txt)" \
  dev.heed.examples.ScoringServiceLoadRun "${1:-8,32,64}" "${2:-10}" "${3:-2}" "${4:-5}" \
  "${5:-$(nproc)}" "${6:-benchmarks/target/service-load.csv}"
