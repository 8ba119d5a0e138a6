package dev.heed.bench.live;

import dev.heed.live.LiveSnapshot;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicLong;

/**
 * The ingest of {@link VersionedGraphBenchmark} (same graph, batches, 2 writers and 1 reader,
 * background compaction) for a fixed time, reporting the writers' thread CPU time ({@link
 * ThreadMXBean}) as well as wall time: on a machine shared with other work, edges per writer
 * CPU-second say what the code costs, and the wall rate what the machine allowed. Complements the
 * JMH figures; it does not replace them.
 *
 * <p>Run: {@code java -Xmx6g -cp benchmarks/target/benchmarks.jar dev.heed.bench.live.LiveIngestCpu
 * [seconds] [warm-up seconds]} (defaults 8 and 0). With a warm-up, the rates count only what the
 * writers did after it (each writer's CPU time and edges from its first batch after the warm-up),
 * so that a run on a busy machine, where the writers get little CPU, is not dominated by the JIT's
 * early code.
 */
public final class LiveIngestCpu {

  private LiveIngestCpu() {}

  /**
   * Entry point.
   *
   * @param args optional: seconds to run, then seconds of warm-up within them
   * @throws InterruptedException if interrupted while waiting
   */
  public static void main(String[] args) throws InterruptedException {
    long seconds = args.length > 0 ? Long.parseLong(args[0]) : 8;
    long warmUp = args.length > 1 ? Long.parseLong(args[1]) : 0;
    int[][] edges = LiveInputs.rmatEdges();
    Long[] ids = LiveInputs.nodeIds();
    VersionedGraph<Long> graph = VersionedGraph.builder(LiveInputs.FEATURES).build();
    LiveInputs.addNodes(graph, ids);
    ThreadMXBean cpu = ManagementFactory.getThreadMXBean();
    AtomicBoolean stop = new AtomicBoolean();
    AtomicBoolean measuring = new AtomicBoolean(warmUp == 0);
    AtomicLong inserted = new AtomicLong();
    long[] writerCpu = new long[2];
    Thread[] writers = new Thread[2];
    for (int w = 0; w < writers.length; w++) {
      int slot = w;
      writers[w] =
          new Thread(
              () -> {
                long start = -1;
                UpdateBatch<Long> batch = graph.newBatch();
                int half = LiveInputs.EDGES / 2;
                int next = slot * half;
                int end = next + half;
                while (!stop.get() && next + LiveInputs.BATCH <= end) {
                  if (start < 0 && measuring.get()) {
                    start = cpu.getCurrentThreadCpuTime();
                  }
                  batch.clear();
                  for (int k = 0; k < LiveInputs.BATCH; k++, next++) {
                    batch.addEdge(ids[edges[0][next]], ids[edges[1][next]]);
                  }
                  graph.apply(batch);
                  if (start >= 0) {
                    inserted.addAndGet(LiveInputs.BATCH);
                  }
                }
                writerCpu[slot] = start < 0 ? 0 : cpu.getCurrentThreadCpuTime() - start;
              });
    }
    long[] readerCpu = new long[1];
    Thread reader =
        new Thread(
            () -> {
              long start = -1;
              SplittableRandom random = new SplittableRandom(7);
              int[] row = new int[1 << 20];
              long sum = 0;
              while (!stop.get()) {
                if (start < 0 && measuring.get()) {
                  start = cpu.getCurrentThreadCpuTime();
                }
                LiveSnapshot<Long> snapshot = graph.snapshot();
                for (int k = 0; k < 16; k++) {
                  sum += snapshot.copyRow(random.nextInt(snapshot.nodeCount()), row, 0);
                }
              }
              readerCpu[0] = (start < 0 ? 0 : cpu.getCurrentThreadCpuTime() - start) + (sum & 1);
            });
    for (Thread writer : writers) {
      writer.start();
    }
    reader.start();
    Thread.sleep(warmUp * 1000);
    measuring.set(true);
    long began = System.nanoTime();
    Thread.sleep((seconds - warmUp) * 1000);
    stop.set(true);
    for (Thread writer : writers) {
      writer.join();
    }
    reader.join();
    double wall = (System.nanoTime() - began) / 1e9;
    double writerSeconds = (writerCpu[0] + writerCpu[1]) / 1e9;
    // A benchmark program's own report on its standard output (not library code).
    System.out.println(
        String.format(
            Locale.ROOT,
            "%d edges in %.1f s: %.2f M edges/s wall; writer CPU %.1f s (reader %.1f s):"
                + " %.2f M edges per writer CPU-second; %s",
            inserted.get(),
            wall,
            inserted.get() / wall / 1e6,
            writerSeconds,
            readerCpu[0] / 1e9,
            inserted.get() / writerSeconds / 1e6,
            graph.snapshot()));
    graph.close();
  }
}
