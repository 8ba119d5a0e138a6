package dev.heed.bench.live;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.live.LiveMemory;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.util.Locale;

/**
 * Bytes per edge of a {@link VersionedGraph} against the compacted CSR of the same graph, on the
 * benchmark R-MAT graph (scale 20: 1,048,576 nodes, 16,777,216 edges; 8 features per node; default
 * policies). Steps: build the {@link CsrGraph} of all edges with {@link CsrGraphBuilder} (the
 * compacted reference); add the nodes to a live graph and compact (base: self-loops and features);
 * add every edge in batches of {@value LiveInputs#BATCH} without compacting (all edges in deltas);
 * compact; then add 10 % more edges (a second R-MAT stream) as deltas over the compacted base, and
 * compact again.
 *
 * <p>At each step it prints the live graph's own accounting ({@link LiveSnapshot#memory()}: array
 * lengths, compressed references) and checks it by GC-and-sample: used heap after {@code
 * System.gc()} with the graph held, minus the same before it was made (the edge arrays, ids and
 * reference graph are held throughout, so they cancel out). Run it with the serial collector, whose
 * used heap after a full collection is exact (G1 counts whole regions for large arrays): {@code
 * java -Xmx6g -XX:+UseSerialGC -cp benchmarks/target/benchmarks.jar
 * dev.heed.bench.live.VersionedGraphMemory}.
 */
public final class VersionedGraphMemory {

  private static final double MIB = 1 << 20;

  private VersionedGraphMemory() {}

  /**
   * Entry point.
   *
   * @param args none
   */
  public static void main(String[] args) {
    MemoryMXBean memory = ManagementFactory.getMemoryMXBean();
    int[][] edges = LiveInputs.rmatEdges();
    int[] sources = edges[0];
    int[] targets = edges[1];
    int extra = LiveInputs.EDGES / 10;
    int[] moreSources = new int[extra];
    int[] moreTargets = new int[extra];
    RmatGenerator.withScale(LiveInputs.SCALE)
        .edgeCount(extra)
        .seed(LiveInputs.SEED + 1)
        .generateInto(moreSources, moreTargets);
    Long[] ids = LiveInputs.nodeIds();
    int n = ids.length;

    CsrGraph reference = CsrGraphBuilder.fromEdges(sources, targets, n).build();
    long exact = 16 + 4L * (n + 1) + 16 + 4L * reference.edgeCount();
    say(
        "compacted CSR (CsrGraphBuilder, self-loops added, duplicates merged): n=%d E=%d,"
            + " %.1f MiB = %.3f bytes per entry (%.3f without the builder's unused tail)",
        n,
        reference.edgeCount(),
        reference.storageBytes() / MIB,
        reference.storageBytes() / (double) reference.edgeCount(),
        exact / (double) reference.edgeCount());

    long before = usedAfterGc(memory);
    VersionedGraph<Long> graph =
        VersionedGraph.builder(LiveInputs.FEATURES).backgroundCompaction(false).build();
    LiveInputs.addNodes(graph, ids);
    report("nodes and features only, compacted", graph.snapshot(), memory, before, reference);

    insert(graph, ids, sources, targets);
    report(
        "all edges added, no compaction (all in deltas)",
        graph.snapshot(),
        memory,
        before,
        reference);

    long started = System.nanoTime();
    graph.compact();
    say("compaction took %.2f s (this machine, shared)", (System.nanoTime() - started) / 1e9);
    report("after compaction", graph.snapshot(), memory, before, reference);
    say(
        "same graph as CsrGraphBuilder: %s",
        graph.snapshot().toIndexedGraph().graph().equals(reference));

    insert(graph, ids, moreSources, moreTargets);
    report(
        "10 % more edges as deltas over the compacted base",
        graph.snapshot(), memory, before, reference);
    graph.compact();
    report("compacted again", graph.snapshot(), memory, before, reference);
    graph.close();
  }

  private static void insert(VersionedGraph<Long> graph, Long[] ids, int[] sources, int[] targets) {
    UpdateBatch<Long> batch = graph.newBatch();
    for (int e = 0; e < sources.length; e++) {
      batch.addEdge(ids[sources[e]], ids[targets[e]]);
      if (batch.size() == LiveInputs.BATCH || e == sources.length - 1) {
        graph.apply(batch);
        batch.clear();
      }
    }
  }

  private static void report(
      String step,
      LiveSnapshot<Long> snapshot,
      MemoryMXBean memory,
      long before,
      CsrGraph reference) {
    LiveMemory m = snapshot.memory();
    long sampled = usedAfterGc(memory) - before;
    double compactPerEntry = reference.storageBytes() / (double) reference.edgeCount();
    say("%s:", step);
    say(
        "  E=%d; rows %.1f MiB = %.3f bytes per entry (%.2fx the compacted CSR's %.3f):"
            + " base %.1f MiB, deltas %.1f MiB for %d changes (%.1f bytes per change)",
        m.edgeCount(),
        m.graphBytes() / MIB,
        m.graphBytesPerEdge(),
        m.graphBytesPerEdge() / compactPerEntry,
        compactPerEntry,
        m.baseGraphBytes() / MIB,
        m.deltaBytes() / MIB,
        m.deltaEntries(),
        m.deltaEntries() == 0 ? 0 : m.deltaBytes() / (double) m.deltaEntries());
    say(
        "  features %.1f MiB (+%.1f MiB replaced rows), id map arrays %.1f MiB; counted total"
            + " %.1f MiB, GC-and-sample %.1f MiB",
        m.baseFeatureBytes() / MIB,
        m.featureDeltaBytes() / MIB,
        m.idMapBytes() / MIB,
        m.totalBytes() / MIB,
        sampled / MIB);
  }

  private static long usedAfterGc(MemoryMXBean memory) {
    for (int i = 0; i < 3; i++) {
      System.gc();
    }
    return memory.getHeapMemoryUsage().getUsed();
  }

  private static void say(String format, Object... args) {
    // A benchmark program's own report on its standard output (not library code).
    System.out.println(String.format(Locale.ROOT, format, args));
  }
}
