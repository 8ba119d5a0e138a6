package dev.heed.attention.internal;

import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import java.util.List;

/**
 * The ways the two kernels run one attention call, each with the work terms its time grows with.
 * The path cost model ({@code dev.heed.attention.PathCosts}) predicts a call's time as a sum of
 * coefficient × term over its regime; calibration fits the coefficients on the machine. Internal,
 * not API.
 *
 * <p>A term's unit of work is counted from the call's size only (n, entries E, heads H, key width
 * dk, value width dv, whether the pattern is the complete one, threads). Terms marked parallel run
 * on the kernel's Java threads and are divided by the speed-up {@code 1 + e · (t − 1)} of the t
 * threads the call uses, e being the profile's parallel efficiency; the others are not.
 *
 * <p>The sparse regimes follow the CSR kernel's own choice, which is made once per call (see the
 * sparse module's kernel): additive scores with {@value #ALL_HEADS_HEADS} heads of {@value
 * #ALL_HEADS_HEADS} value floats take the all-heads path when the Vector API loops run; over a CSR
 * graph whose packed node table would hold at least {@value #PACKED_TABLE_MIN_BYTES} bytes ({@value
 * #PACKED_ROW_BYTES} per node) they first copy keys and values into that table; every other call
 * takes the per-head path, one regime per score function. A test in the sparse module checks that
 * these rules match the kernel's.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum CostRegime {
  /**
   * The dense kernel: a fixed cost; its matrix products, n²·H·(dk + dv) (BLAS threads, not scaled);
   * its per-score-element Java work, n²·H (softmax; parallel); the CSR mask, n²·H for a CSR pattern
   * (ND4J adds); GATv2's Java scores, H·dk per scored pair (n² complete, E masked; parallel); the
   * matrix products of a small call ({@link #isSmallDenseCall}), n²·H·(dk + dv) on one BLAS thread;
   * the matrix products of a split call ({@link #isSplitDenseCall}), n²·H·(dk + dv), each block's
   * on one BLAS thread of the call's own threads. A small call runs on one thread throughout, so
   * its parallel terms are not divided.
   */
  DENSE(
      "dense",
      ComputePath.DENSE,
      List.of("fixed", "product", "element", "mask", "gatv2", "small_product", "split_product"),
      new boolean[] {false, false, true, false, true, false, false}),
  /**
   * Sparse per-head path, additive (GAT) scores: fixed; n rows; E·H; E·H·(dk + dv) over a CSR
   * graph; E·H·(dk + dv) over the complete pattern, whose rows run in tiles that share each block
   * of sources while it is in cache (and, for dot products, score it from transposed keys), so its
   * entries cost less than a CSR graph's.
   */
  SPARSE_PER_HEAD_ADDITIVE(
      "sparse_per_head_additive", ComputePath.SPARSE, perHeadTerms(), perHead()),
  /**
   * Sparse per-head path, scaled dot-product scores; terms as the additive regime, and E·H·(dk +
   * dv) over a CSR graph whose rows the kernel computes whole ({@link #takesWholeRows}) in place of
   * the CSR term.
   */
  SPARSE_PER_HEAD_DOT(
      "sparse_per_head_dot",
      ComputePath.SPARSE,
      dotTerms(),
      new boolean[] {false, true, true, true, true, true, true}),
  /** Sparse per-head path, GATv2 scores; terms as the additive regime. */
  SPARSE_PER_HEAD_GATV2("sparse_per_head_gatv2", ComputePath.SPARSE, perHeadTerms(), perHead()),
  /** Sparse all-heads path reading the caller's arrays in place: fixed; n rows; E. */
  SPARSE_ALL_HEADS(
      "sparse_all_heads",
      ComputePath.SPARSE,
      List.of("fixed", "row", "entry"),
      new boolean[] {false, true, true}),
  /** Sparse all-heads path over the packed node table: fixed; n nodes copied and rows; E. */
  SPARSE_ALL_HEADS_PACKED(
      "sparse_all_heads_packed",
      ComputePath.SPARSE,
      List.of("fixed", "node", "entry"),
      new boolean[] {false, true, true});

  /** Heads and value floats per head of the sparse all-heads path. */
  public static final int ALL_HEADS_HEADS = 8;

  /** Bytes per node of the sparse path's packed node table. */
  public static final int PACKED_ROW_BYTES = 320;

  /** Smallest packed node table the sparse path builds, in bytes (16 MiB). */
  public static final long PACKED_TABLE_MIN_BYTES = 16L << 20;

  /**
   * A dense call over fewer node pairs than this (n below 725), except with GATv2 scores, is small:
   * the dense kernel runs it on the calling thread with one BLAS thread ({@link
   * #isSmallDenseCall}).
   */
  public static final long DENSE_SMALL_CALL_PAIRS = 1L << 19;

  /**
   * A dense call over at least this many node pairs (n of 2,897 and more), except with GATv2
   * scores, may split its row blocks over its own threads, each block's products on one BLAS thread
   * ({@link #isSplitDenseCall}).
   */
  public static final long DENSE_SPLIT_MIN_PAIRS = 1L << 23;

  /** Cost units (entries + rows) per thread below which the sparse path uses fewer threads. */
  public static final long SPARSE_MIN_COST_PER_THREAD = 1L << 14;

  private static final String PACK_PROPERTY = "heed.sparse.pack";
  private static final String VECTOR_PROPERTY = "heed.sparse.vector";

  private final String key;
  private final ComputePath path;
  private final List<String> terms;
  private final boolean[] parallel;

  CostRegime(String key, ComputePath path, List<String> terms, boolean[] parallel) {
    this.key = key;
    this.path = path;
    this.terms = terms;
    this.parallel = parallel;
  }

  /** The dense regime's term of a small call's matrix products. */
  public static final String SMALL_PRODUCT = "small_product";

  /** The dense regime's term of a split call's matrix products. */
  public static final String SPLIT_PRODUCT = "split_product";

  /** The dense regime's term of matrix products, which profiles also held for small calls. */
  public static final String PRODUCT = "product";

  /** The per-head regimes' term of complete-pattern entries (see {@link #perHeadTerms()}). */
  public static final String COMPLETE_ENTRY_WIDTH = "complete_entry_width";

  /** The per-head regimes' term of CSR entries, which profiles also held for complete patterns. */
  public static final String ENTRY_WIDTH = "entry_width";

  /**
   * The per-head regimes' term of CSR entries in rows computed whole ({@link #takesWholeRows}),
   * which profiles also held as {@link #ENTRY_WIDTH}.
   */
  public static final String WHOLE_ROW_ENTRY_WIDTH = "whole_row_entry_width";

  /**
   * The longest CSR row the sparse per-head path computes whole with dot-product scores (its scores
   * held for the whole row, exact maxima, one weighted sum); longer rows run in blocks.
   */
  public static final int WHOLE_ROW_MAX_ENTRIES = 1024;

  /**
   * The per-head regimes' term of CSR entries whose key and value rows come from beyond one core's
   * second-level cache ({@link #farFraction}); a profile without it reads 0.
   */
  public static final String FAR_ENTRY_WIDTH = "far_entry_width";

  private static List<String> perHeadTerms() {
    return List.of("fixed", "row", "entry", ENTRY_WIDTH, COMPLETE_ENTRY_WIDTH, FAR_ENTRY_WIDTH);
  }

  private static List<String> dotTerms() {
    return List.of(
        "fixed",
        "row",
        "entry",
        ENTRY_WIDTH,
        COMPLETE_ENTRY_WIDTH,
        FAR_ENTRY_WIDTH,
        WHOLE_ROW_ENTRY_WIDTH);
  }

  private static boolean[] perHead() {
    return new boolean[] {false, true, true, true, true, true};
  }

  /**
   * The share of a CSR call's key and value row reads expected to miss one core's second-level
   * cache: {@code max(0, 1 − L2 / table)}, the table being n·H·(dk + dv) floats, for sources drawn
   * at random (common practice for a cache under uniform random access). 0 for the complete
   * pattern, whose tiles read each block of sources from cache.
   *
   * @param size the call
   * @param l2Bytes one core's second-level cache, in bytes
   * @return in {@code [0, 1)}
   */
  public static double farFraction(CallSize size, long l2Bytes) {
    if (size.complete()) {
      return 0;
    }
    HeadShape shape = size.shape();
    double table =
        4.0 * size.nodes() * shape.heads() * (double) (shape.keyDim() + shape.valueDim());
    return table <= l2Bytes ? 0 : 1 - l2Bytes / table;
  }

  /**
   * Whether the sparse per-head path computes this call's rows whole: scaled dot-product scores, 4
   * heads of 16 key and 16 value floats, the Vector API loops on, a CSR graph (not the complete
   * pattern) and rows of at most {@value #WHOLE_ROW_MAX_ENTRIES} entries on average. The kernel
   * decides row by row, so for a graph whose rows straddle the limit this is the average row's
   * choice; it also assumes vectors of at least 8 floats (AVX2 and wider), which the kernel checks.
   *
   * @param size the call
   * @return true if the call's entries are priced as whole rows'
   */
  public static boolean takesWholeRows(CallSize size) {
    HeadShape shape = size.shape();
    return size.score() instanceof ScoreFunction.ScaledDotProduct
        && !size.complete()
        && SparseSwitches.VECTOR_LOOPS
        && shape.heads() == 4
        && shape.keyDim() == 16
        && shape.valueDim() == 16
        && size.entries() <= (long) WHOLE_ROW_MAX_ENTRIES * Math.max(1, size.nodes());
  }

  /**
   * Returns the regime's name in profile files.
   *
   * @return for example {@code "sparse_per_head_dot"}
   */
  public String key() {
    return key;
  }

  /**
   * Returns the path this regime belongs to.
   *
   * @return the path
   */
  public ComputePath path() {
    return path;
  }

  /**
   * Returns the names of the regime's terms, in coefficient order.
   *
   * @return an unmodifiable list
   */
  public List<String> terms() {
    return terms;
  }

  /**
   * Returns the regime with this profile name.
   *
   * @param key the name
   * @return the regime, or null if none has it
   */
  public static CostRegime byKey(String key) {
    for (CostRegime r : values()) {
      if (r.key.equals(key)) {
        return r;
      }
    }
    return null;
  }

  /**
   * Returns the regime a call on {@code path} runs in.
   *
   * @param path the path
   * @param size the call
   * @return the regime
   */
  public static CostRegime of(ComputePath path, CallSize size) {
    if (path == ComputePath.DENSE) {
      return DENSE;
    }
    ScoreFunction score = size.score();
    if (score instanceof ScoreFunction.Additive
        && size.shape().heads() == ALL_HEADS_HEADS
        && size.shape().valueDim() == ALL_HEADS_HEADS
        && SparseSwitches.VECTOR_LOOPS) {
      return !size.complete()
              && SparseSwitches.PACKED
              && (long) PACKED_ROW_BYTES * size.nodes() >= PACKED_TABLE_MIN_BYTES
          ? SPARSE_ALL_HEADS_PACKED
          : SPARSE_ALL_HEADS;
    }
    if (score instanceof ScoreFunction.Additive) {
      return SPARSE_PER_HEAD_ADDITIVE;
    }
    if (score instanceof ScoreFunction.Gatv2) {
      return SPARSE_PER_HEAD_GATV2;
    }
    return SPARSE_PER_HEAD_DOT;
  }

  /**
   * Whether the dense kernel runs a call over n nodes with this score as a small call: on the
   * calling thread alone, its matrix products on one BLAS thread. Such a call's products are too
   * short to share between threads; the threshold was measured on 2 cores (see the dense module's
   * kernel). GATv2 calls form every score in Java and keep their threads.
   *
   * @param n the node count
   * @param score the score function
   * @return true for a small call
   */
  public static boolean isSmallDenseCall(int n, ScoreFunction score) {
    return !(score instanceof ScoreFunction.Gatv2) && (long) n * n < DENSE_SMALL_CALL_PAIRS;
  }

  /**
   * Whether the dense kernel may run a call over n nodes with this score as a split call: its row
   * blocks taken in turn by the call's own threads, each block's products on one BLAS thread. The
   * kernel splits such a call when the Vector API softmax runs, the process has more than one BLAS
   * thread and the memory budget holds a block per thread; the cost model assumes it does.
   *
   * @param n the node count
   * @param score the score function
   * @return true for a call the kernel splits where it can
   */
  public static boolean isSplitDenseCall(int n, ScoreFunction score) {
    return !(score instanceof ScoreFunction.Gatv2) && (long) n * n >= DENSE_SPLIT_MIN_PAIRS;
  }

  /**
   * Returns the threads a call uses: for the sparse path, as the kernel decides (fewer for small
   * calls, at most n); for the dense path's Java work, all of them, or one for a small call.
   *
   * @param size the call
   * @return at least 1
   */
  public int threadsUsed(CallSize size) {
    if (path == ComputePath.DENSE) {
      return isSmallDenseCall(size.nodes(), size.score()) ? 1 : size.threads();
    }
    long cost = size.entries() + size.nodes();
    return (int)
        Math.max(
            1,
            Math.min(
                Math.min(size.threads(), Math.max(1, size.nodes())),
                Math.max(1, cost / SPARSE_MIN_COST_PER_THREAD)));
  }

  /**
   * Returns the call's work per term, parallel terms divided by the speed-up of the threads it
   * uses; a prediction is the dot product of these with the coefficients.
   *
   * @param size the call
   * @param parallelEfficiency e in {@code [0, 1]}
   * @return one value per term, in {@link #terms()} order
   */
  public double[] features(CallSize size, double parallelEfficiency) {
    double n = size.nodes();
    double e = size.entries();
    HeadShape shape = size.shape();
    double h = shape.heads();
    double width = shape.keyDim() + shape.valueDim();
    double[] f =
        switch (this) {
          case DENSE -> {
            boolean small = isSmallDenseCall(size.nodes(), size.score());
            boolean split = isSplitDenseCall(size.nodes(), size.score());
            yield new double[] {
              1,
              small || split ? 0 : n * n * h * width,
              n * n * h,
              size.complete() ? 0 : n * n * h,
              size.score() instanceof ScoreFunction.Gatv2 ? e * h * shape.keyDim() : 0,
              small ? n * n * h * width : 0,
              split ? n * n * h * width : 0
            };
          }
          case SPARSE_PER_HEAD_ADDITIVE, SPARSE_PER_HEAD_GATV2 ->
              new double[] {
                1,
                n,
                e * h,
                size.complete() ? 0 : e * h * width,
                size.complete() ? e * h * width : 0,
                e * h * width * farFraction(size, CacheSizes.l2Bytes())
              };
          case SPARSE_PER_HEAD_DOT -> {
            boolean whole = takesWholeRows(size);
            yield new double[] {
              1,
              n,
              e * h,
              size.complete() || whole ? 0 : e * h * width,
              size.complete() ? e * h * width : 0,
              e * h * width * farFraction(size, CacheSizes.l2Bytes()),
              whole ? e * h * width : 0
            };
          }
          case SPARSE_ALL_HEADS, SPARSE_ALL_HEADS_PACKED -> new double[] {1, n, e};
        };
    double speedUp = 1 + parallelEfficiency * (threadsUsed(size) - 1);
    for (int i = 0; i < f.length; i++) {
      if (parallel[i]) {
        f[i] /= speedUp;
      }
    }
    return f;
  }

  /** The sparse kernel's user switches, read once as the kernel reads them. */
  private static final class SparseSwitches {
    static final boolean PACKED = !"false".equalsIgnoreCase(System.getProperty(PACK_PROPERTY));
    static final boolean VECTOR_LOOPS =
        VectorApiLoader.vectorModule().isPresent()
            && !"false".equalsIgnoreCase(System.getProperty(VECTOR_PROPERTY));
  }

  /**
   * The size of one attention call, as far as its cost goes.
   *
   * @param nodes n, the pattern's node count
   * @param entries E, the pattern's entries (n² for the complete pattern)
   * @param complete whether the pattern is the complete one (no storage, no mask)
   * @param score the score function
   * @param shape heads and widths
   * @param threads the threads the caller allows, at least 1
   */
  public record CallSize(
      int nodes,
      long entries,
      boolean complete,
      ScoreFunction score,
      HeadShape shape,
      int threads) {

    /**
     * Checks the values.
     *
     * @throws IllegalArgumentException if a count is negative or threads is below 1
     * @throws NullPointerException if score or shape is null
     */
    public CallSize {
      java.util.Objects.requireNonNull(score, "score");
      java.util.Objects.requireNonNull(shape, "shape");
      if (nodes < 0 || entries < 0 || threads < 1) {
        throw new IllegalArgumentException(
            "call size out of range: nodes="
                + nodes
                + ", entries="
                + entries
                + ", threads="
                + threads
                + " (counts at least 0, threads at least 1)");
      }
    }
  }
}
