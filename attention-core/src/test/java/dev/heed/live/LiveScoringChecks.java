package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelOutput;
import dev.heed.model.PathChoice;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.TreeSet;
import org.jgrapht.Graph;
import org.jgrapht.generate.NamedGraphGenerator;
import org.jgrapht.graph.DefaultEdge;
import org.jgrapht.graph.SimpleGraph;
import org.jgrapht.util.SupplierUtil;

/**
 * Shared checks for incremental scoring on live graphs: loading a graph whose node ids are their
 * indices, seeded random update batches (edges inserted and deleted, nodes added with and without
 * features, features changed), and the from-scratch full pass an {@link IncrementalScorer} must
 * match. Used by the core's tests (reference kernel) and by the kernel modules' tests (real paths).
 */
public final class LiveScoringChecks {

  /** Norm-wise relative error allowed per node (largest difference over largest value). */
  public static final double TOLERANCE = 1e-5;

  private LiveScoringChecks() {}

  /**
   * A live graph of nodes {@code 0..n-1} (id = index) with the given features and edges, self-loops
   * added, duplicates merged, background compaction on (so scoring also sees compacted snapshots).
   *
   * @param n nodes
   * @param sources edge sources
   * @param targets edge targets
   * @param features n × f, row-major
   * @param f features per node
   * @param direction symmetrise or keep
   * @return the graph
   */
  public static VersionedGraph<Integer> load(
      int n, int[] sources, int[] targets, float[] features, int f, DirectionPolicy direction) {
    VersionedGraph<Integer> graph =
        VersionedGraph.builder(f)
            .direction(direction)
            .selfLoops(SelfLoopPolicy.ADD)
            .duplicates(DuplicatePolicy.MERGE)
            .compactionThreshold(0.05, 1)
            .build();
    UpdateBatch<Integer> batch = graph.newBatch();
    float[] row = new float[f];
    for (int v = 0; v < n; v++) {
      System.arraycopy(features, v * f, row, 0, f);
      batch.addNode(v, row);
    }
    for (int e = 0; e < sources.length; e++) {
      batch.addEdge(sources[e], targets[e]);
    }
    graph.apply(batch);
    return graph;
  }

  /**
   * Applies one batch of {@code ops} seeded random updates: edge inserts (the most common), edge
   * deletes, a node added with features, a node added without (its features set by a later batch's
   * feature change, which prefers such nodes), feature changes.
   *
   * @param graph a graph whose ids are indices
   * @param random the seeded source
   * @param ops operations in the batch
   * @return the batch's result
   */
  public static BatchResult randomBatch(
      VersionedGraph<Integer> graph, SplittableRandom random, int ops) {
    LiveSnapshot<Integer> now = graph.snapshot();
    int n = now.nodeCount();
    int f = graph.featureCount();
    UpdateBatch<Integer> batch = graph.newBatch();
    Set<Long> touched = new HashSet<>();
    int next = n;
    for (int op = 0; op < ops; op++) {
      int kind = random.nextInt(10);
      if (kind < 4) {
        int a = random.nextInt(n);
        int b = random.nextInt(n);
        if (a != b && touched.add(pair(a, b, graph)) && !now.hasEdge(a, b)) {
          batch.addEdge(a, b);
        }
      } else if (kind < 6) {
        int target = random.nextInt(n);
        int d = now.degree(target);
        if (d > 1) {
          int[] row = new int[d];
          now.copyRow(target, row, 0);
          int source = row[random.nextInt(d)];
          if (source != target && touched.add(pair(source, target, graph))) {
            batch.removeEdge(source, target);
          }
        }
      } else if (kind == 6) {
        batch.addNode(next, gaussian(random, f));
        batch.addEdge(next, random.nextInt(n));
        batch.addEdge(random.nextInt(n), next);
        next++;
      } else if (kind == 7) {
        batch.addNode(next);
        batch.addEdge(next, random.nextInt(n));
        next++;
      } else {
        int node = random.nextInt(n);
        if (now.missingFeatureCount() > 0 && random.nextBoolean()) {
          for (int v = 0; v < n; v++) {
            if (!now.hasFeatures(v)) {
              node = v;
              break;
            }
          }
        }
        if (touched.add(-1L - node)) {
          batch.setFeatures(node, gaussian(random, f));
        }
      }
    }
    return graph.apply(batch);
  }

  private static long pair(int a, int b, VersionedGraph<Integer> graph) {
    if (graph.direction() == DirectionPolicy.SYMMETRISE && a > b) {
      return ((long) b << 32) | a;
    }
    return ((long) a << 32) | b;
  }

  /**
   * Zachary's karate club (W. W. Zachary, "An Information Flow Model for Conflict and Fission in
   * Small Groups", Journal of Anthropological Research 33(4), 1977; structure from JGraphT's
   * NamedGraphGenerator): 34 members, 78 ties, as {sources, targets} over members 0..33.
   *
   * @return the ties, each once
   */
  public static int[][] karateEdges() {
    Graph<Integer, DefaultEdge> karate =
        new SimpleGraph<>(
            SupplierUtil.createIntegerSupplier(), SupplierUtil.DEFAULT_EDGE_SUPPLIER, false);
    new NamedGraphGenerator<Integer, DefaultEdge>().generateZacharyKarateClubGraph(karate);
    List<Integer> members = new ArrayList<>(new TreeSet<>(karate.vertexSet()));
    int m = karate.edgeSet().size();
    int[] s = new int[m];
    int[] t = new int[m];
    int k = 0;
    for (DefaultEdge edge : karate.edgeSet()) {
      s[k] = members.indexOf(karate.getEdgeSource(edge));
      t[k++] = members.indexOf(karate.getEdgeTarget(edge));
    }
    return new int[][] {s, t};
  }

  /**
   * R-MAT edges ({@link RmatGenerator}: Chakrabarti, Zhan, Faloutsos, "R-MAT: A Recursive Model for
   * Graph Mining", SDM 2004, Graph500 initiator, scrambled ids) over {@code 2^scale} nodes.
   *
   * @param scale log2 of the node count
   * @param edgeFactor generated edges per node
   * @param seed the seed
   * @return {sources, targets}
   */
  public static int[][] rmatEdges(int scale, int edgeFactor, long seed) {
    int e = edgeFactor << scale;
    int[] s = new int[e];
    int[] t = new int[e];
    RmatGenerator.withScale(scale).edgeCount(e).seed(seed).generateInto(s, t);
    return new int[][] {s, t};
  }

  /**
   * Seeded standard normal values.
   *
   * @param random the source
   * @param length how many
   * @return the values
   */
  public static float[] gaussian(SplittableRandom random, int length) {
    float[] x = new float[length];
    for (int i = 0; i < length; i++) {
      double u = 1.0 - random.nextDouble();
      x[i] = (float) (Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * random.nextDouble()));
    }
    return x;
  }

  /**
   * The from-scratch full pass over one snapshot: every node's probabilities, or null for a node
   * the model cannot score (it, or a node within as many in-hops as the model has attention layers,
   * has no features; those rows run with zero features and are then discarded).
   *
   * @param model the model
   * @param snapshot the version
   * @param path the path of the full pass
   * @param hops the model's attention layer count
   * @return per node, probabilities or null
   */
  public static float[][] fullPass(
      AttentionModel model, LiveSnapshot<Integer> snapshot, PathChoice path, int hops) {
    CsrGraph graph = snapshot.toIndexedGraph().graph();
    int n = snapshot.nodeCount();
    int f = snapshot.featureCount();
    float[] x = new float[n * f];
    boolean[] missing = new boolean[n];
    for (int v = 0; v < n; v++) {
      if (snapshot.hasFeatures(v)) {
        snapshot.copyRow(v, x, v * f);
      } else {
        missing[v] = true;
      }
    }
    for (int hop = 0; hop < hops; hop++) {
      boolean[] next = missing.clone();
      for (int v = 0; v < n; v++) {
        for (int e = graph.rowStart(v); e < graph.rowEnd(v); e++) {
          next[v] |= missing[graph.columns()[e]];
        }
      }
      missing = next;
    }
    ModelOutput out = model.forward(graph, x, path, false);
    float[][] p = new float[n][];
    for (int v = 0; v < n; v++) {
      p[v] = missing[v] ? null : out.row(v);
    }
    return p;
  }

  /**
   * Checks that every node's score equals the full pass: fresh and within {@link #TOLERANCE} for
   * scorable nodes, not scorable for the others, all for the snapshot's version. The scorer must
   * have nothing pending.
   *
   * @param scorer the scorer
   * @param expected from {@link #fullPass}
   * @param version the snapshot's version
   * @param where for messages
   */
  public static void assertMatches(
      IncrementalScorer<Integer> scorer, float[][] expected, long version, String where) {
    for (int v = 0; v < expected.length; v++) {
      LiveScore<Integer> s = scorer.score(v);
      assertEquals(version, s.version(), where);
      if (expected[v] == null) {
        assertEquals(ScoreState.NOT_SCORABLE, s.state(), where + ", node " + v);
        assertNull(s.topLabel().orElse(null), where);
      } else {
        assertEquals(ScoreState.FRESH, s.state(), where + ", node " + v);
        double error = relativeError(expected[v], s.probabilities());
        assertTrue(error <= TOLERANCE, where + ", node " + v + ": relative error " + error);
      }
    }
  }

  /**
   * Largest difference over largest reference value.
   *
   * @param expected reference
   * @param actual values
   * @return the error
   */
  public static double relativeError(float[] expected, float[] actual) {
    assertEquals(expected.length, actual.length);
    double diff = 0;
    double size = 0;
    for (int i = 0; i < expected.length; i++) {
      diff = Math.max(diff, Math.abs((double) expected[i] - actual[i]));
      size = Math.max(size, Math.abs(expected[i]));
    }
    return size == 0 ? diff : diff / size;
  }
}
