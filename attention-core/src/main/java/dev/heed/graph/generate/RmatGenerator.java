package dev.heed.graph.generate;

import dev.heed.graph.CsrGraphBuilder;
import java.util.Objects;
import java.util.SplittableRandom;

/**
 * The R-MAT recursive graph generator (Chakrabarti, Zhan, Faloutsos, "R-MAT: A Recursive Model for
 * Graph Mining", SDM 2004), with the Graph500 initiator {@code A = 0.57, B = 0.19, C = 0.19, D =
 * 0.05} and edge factor 16 as defaults. Each edge picks one quadrant of the adjacency matrix per
 * level, {@code scale} times: top-left with probability A, top-right B, bottom-left C, bottom-right
 * D; the row is the source, the column the target. The result is the standard synthetic
 * heavy-tailed graph for benchmarks. It keeps what the model produces: repeated edges and
 * self-loops (the graph builder's policies then decide about them).
 *
 * <p>With {@link #scrambleIds(boolean) scrambling} (the default, as the Graph500 benchmark permutes
 * vertex labels, from memory), node ids pass through a seeded bijection of {@code 0..2^scale-1}, so
 * high-degree nodes are not all near id 0.
 *
 * <pre>{@code
 * CsrGraph graph =
 *     RmatGenerator.withScale(20) // 2^20 nodes, 16 · 2^20 edges
 *         .seed(42)
 *         .generateEdges()
 *         .selfLoops(SelfLoopPolicy.ADD)
 *         .build();
 * }</pre>
 *
 * <p>Cost: O(E · scale) time with one 64-bit random draw per two levels; memory: the two int edge
 * arrays ({@code 8·E} bytes), nothing else. Deterministic for a given configuration and seed.
 *
 * <p>Thread safety: not thread safe; the generator is a builder. Each call of {@link #generateInto}
 * starts from the seed, so repeated calls give the same edges.
 */
public final class RmatGenerator {

  /** Graph500 initiator probability A (top-left quadrant). */
  public static final double DEFAULT_A = 0.57;

  /** Graph500 initiator probability B (top-right quadrant). */
  public static final double DEFAULT_B = 0.19;

  /** Graph500 initiator probability C (bottom-left quadrant). */
  public static final double DEFAULT_C = 0.19;

  /** Graph500 initiator probability D (bottom-right quadrant). */
  public static final double DEFAULT_D = 0.05;

  /** Graph500 edge factor: edges per node. */
  public static final int DEFAULT_EDGE_FACTOR = 16;

  /** Default seed. */
  public static final long DEFAULT_SEED = 1L;

  /** The largest scale: {@code 2^30} nodes. */
  public static final int MAX_SCALE = 30;

  private static final long MAX_EDGES = Integer.MAX_VALUE - 8;

  private final int scale;
  private long edgeCount;
  private double a = DEFAULT_A;
  private double b = DEFAULT_B;
  private double c = DEFAULT_C;
  private long seed = DEFAULT_SEED;
  private boolean scramble = true;

  private RmatGenerator(int scale) {
    this.scale = scale;
    this.edgeCount = (long) DEFAULT_EDGE_FACTOR << scale;
  }

  /**
   * Starts a generator for {@code 2^scale} nodes and, by default, {@value #DEFAULT_EDGE_FACTOR}
   * edges per node.
   *
   * @param scale the number of levels, {@code 0..}{@value #MAX_SCALE}
   * @return the generator
   * @throws IllegalArgumentException if {@code scale} is out of range
   */
  public static RmatGenerator withScale(int scale) {
    if (scale < 0 || scale > MAX_SCALE) {
      throw new IllegalArgumentException(
          "scale must lie in 0.." + MAX_SCALE + " (n = 2^scale), got " + scale);
    }
    return new RmatGenerator(scale);
  }

  /**
   * Sets the number of edges to {@code edgeFactor · 2^scale}.
   *
   * @param edgeFactor edges per node, at least 0
   * @return this generator
   * @throws IllegalArgumentException if negative or the edge count exceeds {@link
   *     Integer#MAX_VALUE} - 8
   */
  public RmatGenerator edgeFactor(int edgeFactor) {
    if (edgeFactor < 0) {
      throw new IllegalArgumentException("edge factor must be at least 0, got " + edgeFactor);
    }
    return edgeCount((long) edgeFactor << scale);
  }

  /**
   * Sets the number of edges directly.
   *
   * @param edges the edge count, {@code 0..Integer.MAX_VALUE - 8}
   * @return this generator
   * @throws IllegalArgumentException if out of range
   */
  public RmatGenerator edgeCount(long edges) {
    if (edges < 0 || edges > MAX_EDGES) {
      throw new IllegalArgumentException(
          "edge count must lie in 0.." + MAX_EDGES + " (int arrays), got " + edges);
    }
    this.edgeCount = edges;
    return this;
  }

  /**
   * Sets the initiator probabilities.
   *
   * @param a top-left
   * @param b top-right
   * @param c bottom-left
   * @param d bottom-right
   * @return this generator
   * @throws IllegalArgumentException if one is negative or not finite, or they do not sum to 1
   *     within 1e-9
   */
  public RmatGenerator initiator(double a, double b, double c, double d) {
    double[] p = {a, b, c, d};
    for (int k = 0; k < 4; k++) {
      if (!(p[k] >= 0 && p[k] <= 1)) {
        throw new IllegalArgumentException(
            "initiator probability " + "ABCD".charAt(k) + " must lie in [0, 1], got " + p[k]);
      }
    }
    if (Math.abs(a + b + c + d - 1.0) > 1e-9) {
      throw new IllegalArgumentException(
          "initiator probabilities must sum to 1, got " + a + " + " + b + " + " + c + " + " + d);
    }
    this.a = a;
    this.b = b;
    this.c = c;
    return this;
  }

  /**
   * Sets the random seed.
   *
   * @param seed the seed
   * @return this generator
   */
  public RmatGenerator seed(long seed) {
    this.seed = seed;
    return this;
  }

  /**
   * Sets whether node ids pass through a seeded bijection (default true).
   *
   * @param scramble true to scramble ids
   * @return this generator
   */
  public RmatGenerator scrambleIds(boolean scramble) {
    this.scramble = scramble;
    return this;
  }

  /**
   * Returns the number of nodes, {@code 2^scale}.
   *
   * @return n
   */
  public int nodeCount() {
    return 1 << scale;
  }

  /**
   * Returns the number of edges that will be generated.
   *
   * @return E
   */
  public int edgeCount() {
    return (int) edgeCount;
  }

  /**
   * Generates the edges into caller-supplied arrays: edge {@code k} is {@code sources[k] ->
   * targets[k]}.
   *
   * @param sources output, length at least {@link #edgeCount()}; the first E elements are
   *     overwritten
   * @param targets output, length at least {@link #edgeCount()}; the first E elements are
   *     overwritten
   * @throws IllegalArgumentException if an array is too short
   * @throws NullPointerException if an array is null
   */
  public void generateInto(int[] sources, int[] targets) {
    Objects.requireNonNull(sources, "sources");
    Objects.requireNonNull(targets, "targets");
    int e = edgeCount();
    if (sources.length < e || targets.length < e) {
      throw new IllegalArgumentException(
          "output arrays must hold "
              + e
              + " edges, got sources.length = "
              + sources.length
              + ", targets.length = "
              + targets.length);
    }
    SplittableRandom random = new SplittableRandom(seed);
    // 32-bit thresholds: a draw r in [0, 2^32) picks A if r < ta, B if r < tab, C if r < tabc.
    long ta = threshold(a);
    long tab = threshold(a + b);
    long tabc = threshold(a + b + c);
    // Split always, so that the edges before relabelling do not depend on scrambling.
    SplittableRandom relabelRandom = random.split();
    Scrambler scrambler = scramble ? new Scrambler(scale, relabelRandom) : null;
    for (int k = 0; k < e; k++) {
      int row = 0;
      int col = 0;
      long bits = 0;
      for (int level = 0; level < scale; level++) {
        long r;
        if ((level & 1) == 0) {
          bits = random.nextLong();
          r = bits >>> 32;
        } else {
          r = bits & 0xFFFF_FFFFL;
        }
        // Branch-free quadrant: A (0,0) below ta, B (0,1) below tab, C (1,0) below tabc, else D.
        int geA = (int) ((ta - 1 - r) >>> 63);
        int geAB = (int) ((tab - 1 - r) >>> 63);
        int geABC = (int) ((tabc - 1 - r) >>> 63);
        row = (row << 1) | geAB;
        col = (col << 1) | (geA ^ geAB ^ geABC);
      }
      if (scrambler != null) {
        row = scrambler.apply(row);
        col = scrambler.apply(col);
      }
      sources[k] = row;
      targets[k] = col;
    }
  }

  /**
   * Generates the edges into new arrays and returns a graph builder over them, with the builder's
   * default policies ({@link CsrGraphBuilder#DEFAULT_SELF_LOOPS}, ...), to adjust and build.
   *
   * @return a builder over the new edges on {@link #nodeCount()} nodes
   */
  public CsrGraphBuilder generateEdges() {
    int[] sources = new int[edgeCount()];
    int[] targets = new int[edgeCount()];
    generateInto(sources, targets);
    return CsrGraphBuilder.fromEdges(sources, targets, nodeCount());
  }

  private static long threshold(double p) {
    return Math.min(1L << 32, Math.round(p * 4294967296.0));
  }

  /** A seeded bijection of {@code 0..2^scale-1}: affine maps and xor-shifts modulo 2^scale. */
  private static final class Scrambler {
    private final int mask;
    private final int shift;
    private final int m1;
    private final int c1;
    private final int m2;
    private final int c2;

    Scrambler(int scale, SplittableRandom random) {
      this.mask = scale == 0 ? 0 : (int) ((1L << scale) - 1);
      this.shift = Math.max(1, (scale + 1) / 2);
      this.m1 = random.nextInt() | 1;
      this.c1 = random.nextInt();
      this.m2 = random.nextInt() | 1;
      this.c2 = random.nextInt();
    }

    int apply(int x) {
      x = (x * m1 + c1) & mask;
      x ^= x >>> shift;
      x = (x * m2 + c2) & mask;
      x ^= x >>> shift;
      return x;
    }
  }
}
