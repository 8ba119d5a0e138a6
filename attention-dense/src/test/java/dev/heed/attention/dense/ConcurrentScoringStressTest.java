package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.KernelOptions;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.PathChoice;
import dev.heed.model.RandomModels;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicLong;
import org.junit.jupiter.api.Test;

/**
 * 32 threads share one model and one graph and run a mix of calls (whole graph, chosen nodes,
 * chosen nodes with explanations, on the sparse and the dense path, with kernels of 1 and 4
 * threads) for a fixed time; every answer must equal, bit for bit, the answer the same call gave on
 * one thread before the run (the kernels are deterministic for every thread count: {@link
 * dev.heed.attention.AttentionKernel}). Any exception, any difference, or a run that does not end
 * within a minute of its deadline (a deadlock) fails the test.
 *
 * <p>The default run lasts {@value #DEFAULT_SECONDS} s; {@code -Dheed.stress.seconds=N} runs longer
 * (for example 60 before a release; see docs/reliability.md).
 */
class ConcurrentScoringStressTest {

  private static final int THREADS = 32;
  private static final long DEFAULT_SECONDS = 10;
  private static final int FEATURES = 8;

  /** One call: its classifier, and the nodes (none: the whole graph). */
  private record Call(String name, NodeClassifier classifier, int[] nodes) {
    Classification run(CsrGraph graph, NodeFeatures features) {
      return nodes.length == 0
          ? classifier.classify(graph, features)
          : classifier.classify(graph, features, nodes);
    }
  }

  @Test
  void sharedModelAndGraphGiveTheSingleThreadedAnswersUnderLoad() throws Exception {
    long seconds = Long.getLong("heed.stress.seconds", DEFAULT_SECONDS);
    CsrGraph graph =
        RmatGenerator.withScale(9)
            .edgeFactor(8)
            .seed(77L)
            .generateEdges()
            .direction(DirectionPolicy.SYMMETRISE)
            .selfLoops(SelfLoopPolicy.ADD)
            .build();
    int n = graph.nodeCount();
    SplittableRandom random = new SplittableRandom(77L);
    float[] x = new float[n * FEATURES];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    NodeFeatures features = NodeFeatures.ofRowMajor(x, n, FEATURES);
    AttentionModel model = RandomModels.gatGatv2Dense(77L, FEATURES, 4);

    List<Call> calls = new ArrayList<>();
    for (int threads : new int[] {1, 4}) {
      AttentionModel shared =
          model.withKernelOptions(KernelOptions.defaults().withThreads(threads));
      for (PathChoice path : new PathChoice[] {PathChoice.SPARSE, PathChoice.DENSE}) {
        ClassifyOptions plain = ClassifyOptions.defaults().withPath(path);
        NodeClassifier classifier = NodeClassifier.of(shared, plain);
        NodeClassifier explaining = NodeClassifier.of(shared, plain.withExplanations(5));
        String where = path + ", " + threads + " kernel threads";
        calls.add(new Call("whole graph, " + where, classifier, new int[0]));
        calls.add(new Call("whole graph explained, " + where, explaining, new int[0]));
        for (int k = 0; k < 3; k++) {
          int[] nodes = random.ints(1 + random.nextInt(8), 0, n).toArray();
          calls.add(new Call("nodes " + Arrays.toString(nodes) + ", " + where, classifier, nodes));
          calls.add(
              new Call("explained " + Arrays.toString(nodes) + ", " + where, explaining, nodes));
        }
      }
    }
    List<String> expected = new ArrayList<>();
    for (Call call : calls) {
      expected.add(fingerprint(call.run(graph, features)));
    }

    ConcurrentLinkedQueue<String> problems = new ConcurrentLinkedQueue<>();
    AtomicLong done = new AtomicLong();
    long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(seconds);
    CountDownLatch start = new CountDownLatch(1);
    ExecutorService pool = Executors.newFixedThreadPool(THREADS);
    try {
      for (int t = 0; t < THREADS; t++) {
        SplittableRandom mine = random.split();
        pool.execute(
            () -> {
              try {
                start.await();
                while (System.nanoTime() < deadline && problems.isEmpty()) {
                  int c = mine.nextInt(calls.size());
                  Call call = calls.get(c);
                  String got = fingerprint(call.run(graph, features));
                  if (!got.equals(expected.get(c))) {
                    problems.add(call.name() + ": differs from the single-threaded answer");
                  }
                  done.incrementAndGet();
                }
              } catch (Throwable e) {
                problems.add(Thread.currentThread().getName() + ": " + e);
              }
            });
      }
      start.countDown();
      pool.shutdown();
      boolean ended = pool.awaitTermination(seconds + 60, TimeUnit.SECONDS);
      assertTrue(ended, "calls still running a minute after the deadline: a deadlock or a hang");
    } finally {
      pool.shutdownNow();
    }
    assertEquals(List.of(), List.copyOf(problems));
    assertTrue(done.get() >= THREADS, "only " + done.get() + " calls completed");
  }

  /** Every number and neighbour of an answer, exactly (floats as their bits). */
  private static String fingerprint(Classification c) {
    StringBuilder b = new StringBuilder();
    for (NodePrediction p : c.predictions()) {
      b.append(p.node()).append(':');
      for (float v : p.probabilities()) {
        b.append(Integer.toHexString(Float.floatToRawIntBits(v))).append(',');
      }
      if (p.explanation().isPresent()) {
        for (LayerExplanation layer : p.explanation().get()) {
          b.append('|').append(layer.layerIndex());
          for (NeighbourWeight w : layer.topNeighbours()) {
            b.append(' ').append(w.node()).append('=');
            b.append(Integer.toHexString(Float.floatToRawIntBits(w.weight())));
          }
        }
      }
      b.append('\n');
    }
    return b.toString();
  }
}
