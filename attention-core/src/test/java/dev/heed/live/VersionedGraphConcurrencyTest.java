package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.SelfLoopPolicy;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicLong;
import org.junit.jupiter.api.Test;

/**
 * 8 reader threads check every snapshot they take while 2 writer threads apply batches and the
 * graph compacts in the background, for a bounded time ({@code -Dheed.live.stressMillis}, 3 s by
 * default). Each batch is built so that a half-applied one is visible: it adds or removes edges in
 * both directions at once, adds nodes only together with their features, and writes into its
 * writer's ledger node the number of row entries that writer's nodes hold afterwards. Readers check
 * symmetry, the ledgers, sorted rows, features on every node and that versions never go back.
 */
class VersionedGraphConcurrencyTest {

  private static final int READERS = 8;
  private static final int WRITERS = 2;
  private static final int START_NODES = 150;
  private static final int FEATURES = 4;

  @Test
  void readersNeverSeeAHalfAppliedBatch() throws InterruptedException {
    long millis = Long.getLong("heed.live.stressMillis", 3000);
    try (VersionedGraph<String> graph =
        VersionedGraph.builder(FEATURES)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .compactionThreshold(0.05, 0)
            .build()) {
      graph.finishUnderLockAt(64); // exercise catching up without the lock
      AtomicBoolean stop = new AtomicBoolean();
      AtomicLong inconsistencies = new AtomicLong();
      AtomicLong snapshotsChecked = new AtomicLong();
      AtomicLong batchesApplied = new AtomicLong();
      ConcurrentLinkedQueue<String> problems = new ConcurrentLinkedQueue<>();
      ConcurrentLinkedQueue<Throwable> crashes = new ConcurrentLinkedQueue<>();
      CountDownLatch ready = new CountDownLatch(WRITERS);
      List<Thread> threads = new ArrayList<>();
      for (int w = 0; w < WRITERS; w++) {
        Writer writer = new Writer(graph, w, new SplittableRandom(100 + w));
        threads.add(
            thread(
                "writer-" + w,
                crashes,
                () -> {
                  writer.start();
                  ready.countDown();
                  while (!stop.get()) {
                    writer.step();
                    batchesApplied.incrementAndGet();
                  }
                }));
      }
      for (int r = 0; r < READERS; r++) {
        threads.add(
            thread(
                "reader-" + r,
                crashes,
                () -> {
                  ready.await();
                  long lastVersion = -1;
                  while (!stop.get()) {
                    LiveSnapshot<String> snapshot = graph.snapshot();
                    String problem = check(snapshot, lastVersion);
                    if (problem != null) {
                      inconsistencies.incrementAndGet();
                      problems.add(problem);
                    }
                    lastVersion = snapshot.version();
                    snapshotsChecked.incrementAndGet();
                  }
                }));
      }
      threads.forEach(Thread::start);
      Thread.sleep(millis);
      stop.set(true);
      for (Thread thread : threads) {
        thread.join();
      }
      assertTrue(crashes.isEmpty(), () -> "a thread failed: " + crashes.peek());
      assertEquals(0, inconsistencies.get(), () -> "first problems: " + first(problems));
      assertTrue(snapshotsChecked.get() > READERS, "snapshots checked " + snapshotsChecked);
      assertTrue(batchesApplied.get() > WRITERS, "batches applied " + batchesApplied);
      // and the final state passes the same check after a last compaction
      LiveSnapshot<String> last = graph.compact();
      assertEquals(null, check(last, -1));
      assertEquals(last.toIndexedGraph().graph(), graph.snapshot().toIndexedGraph().graph());
    }
  }

  private static String first(ConcurrentLinkedQueue<String> problems) {
    List<String> some = new ArrayList<>();
    for (String problem : problems) {
      if (some.size() == 5) {
        break;
      }
      some.add(problem);
    }
    return String.join("; ", some);
  }

  private interface Body {
    void run() throws Exception;
  }

  private static Thread thread(String name, ConcurrentLinkedQueue<Throwable> crashes, Body body) {
    Thread thread =
        new Thread(
            () -> {
              try {
                body.run();
              } catch (Throwable t) {
                crashes.add(t);
              }
            },
            name);
    thread.setDaemon(true);
    return thread;
  }

  /** Returns a description of the first inconsistency in {@code snapshot}, or null. */
  private static String check(LiveSnapshot<String> snapshot, long lastVersion) {
    if (snapshot.version() < lastVersion) {
      return "version went back from " + lastVersion + " to " + snapshot.version();
    }
    if (snapshot.missingFeatureCount() != 0) {
      return "version " + snapshot.version() + ": a node without features";
    }
    int n = snapshot.nodeCount();
    long[] entries = new long[WRITERS];
    long total = 0;
    int[] row = new int[n];
    float[] features = new float[FEATURES];
    for (int i = 0; i < n; i++) {
      String id = snapshot.nodes().idOf(i);
      int length = snapshot.copyRow(i, row, 0);
      if (length != snapshot.degree(i)) {
        return "version " + snapshot.version() + ": degree and row disagree at " + id;
      }
      total += length;
      for (int k = 0; k < length; k++) {
        if (k > 0 && row[k] <= row[k - 1]) {
          return "version " + snapshot.version() + ": row of " + id + " not increasing";
        }
        if (!snapshot.hasEdge(i, row[k])) {
          return "version " + snapshot.version() + ": " + id + " has a one-way edge";
        }
      }
      if (!id.startsWith("ledger")) {
        entries[id.charAt(1) - '0'] += length;
      }
    }
    if (total != snapshot.edgeCount()) {
      return "version " + snapshot.version() + ": edge count " + snapshot.edgeCount() + " != rows";
    }
    for (int w = 0; w < WRITERS; w++) {
      int ledger = snapshot.nodes().indexOf("ledger" + w);
      snapshot.copyRow(ledger, features, 0);
      if (features[0] != entries[w]) {
        return "version "
            + snapshot.version()
            + ": writer "
            + w
            + "'s ledger says "
            + features[0]
            + " entries, its rows hold "
            + entries[w];
      }
    }
    return null;
  }

  /** One writer: its own nodes, the undirected pairs among them, and its ledger. */
  private static final class Writer {
    private final VersionedGraph<String> graph;
    private final int id;
    private final SplittableRandom random;
    private final List<String> nodes = new ArrayList<>();
    private final Set<Long> pairs = new HashSet<>();
    private final List<long[]> pairList = new ArrayList<>();
    private long sequence;

    Writer(VersionedGraph<String> graph, int id, SplittableRandom random) {
      this.graph = graph;
      this.id = id;
      this.random = random;
    }

    void start() {
      UpdateBatch<String> batch = graph.newBatch();
      for (int k = 0; k < START_NODES; k++) {
        nodes.add("w" + id + "-" + k);
        batch.addNode(nodes.get(k), row(k));
      }
      batch.addNode("ledger" + id, new float[] {0, 0, 0, 0});
      graph.apply(batch);
    }

    void step() {
      UpdateBatch<String> batch = graph.newBatch();
      if (random.nextInt(5) == 0) {
        String node = "w" + id + "-" + nodes.size();
        batch.addNode(node, row(nodes.size()));
        nodes.add(node);
      }
      int changes = 1 + random.nextInt(12);
      for (int c = 0; c < changes; c++) {
        if (!pairList.isEmpty() && random.nextInt(3) == 0) {
          long[] pair = pairList.remove(random.nextInt(pairList.size()));
          pairs.remove(key(pair[0], pair[1]));
          batch.removeEdge(nodes.get((int) pair[0]), nodes.get((int) pair[1]));
          batch.removeEdge(nodes.get((int) pair[1]), nodes.get((int) pair[0]));
        } else {
          int a = random.nextInt(nodes.size());
          int b = random.nextInt(nodes.size());
          if (a == b || !pairs.add(key(a, b))) {
            continue;
          }
          pairList.add(new long[] {a, b});
          batch.addEdge(nodes.get(a), nodes.get(b));
          batch.addEdge(nodes.get(b), nodes.get(a));
        }
      }
      if (random.nextInt(4) == 0) {
        int k = random.nextInt(nodes.size());
        batch.setFeatures(nodes.get(k), row(k + (int) sequence));
      }
      sequence++;
      batch.setFeatures("ledger" + id, new float[] {2L * pairs.size(), sequence, id, 1});
      graph.apply(batch);
    }

    private static long key(long a, long b) {
      return Math.min(a, b) << 32 | Math.max(a, b);
    }

    private float[] row(int k) {
      return new float[] {k, -k, id, 0.5f};
    }
  }
}
