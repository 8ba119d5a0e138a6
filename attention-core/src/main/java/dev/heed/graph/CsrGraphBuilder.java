package dev.heed.graph;

import java.util.Objects;

/**
 * Builds a validated {@link CsrGraph} from two parallel edge arrays, {@code sources[k] ->
 * targets[k]}: node {@code i} attends to the nodes {@code j} with an edge {@code j -> i}.
 *
 * <pre>{@code
 * // 0 -> 1, 1 -> 2, 2 -> 0 on 3 nodes, GAT convention (each node also attends to itself)
 * CsrGraph graph =
 *     CsrGraphBuilder.fromEdges(new int[] {0, 1, 2}, new int[] {1, 2, 0}, 3)
 *         .selfLoops(SelfLoopPolicy.ADD)
 *         .direction(DirectionPolicy.KEEP)
 *         .duplicates(DuplicatePolicy.REJECT)
 *         .build();
 * // graph.degree(1) == 2: node 1 attends to 0 and to itself
 * }</pre>
 *
 * <p>Defaults: {@link #DEFAULT_SELF_LOOPS}, {@link #DEFAULT_DIRECTION}, {@link
 * #DEFAULT_DUPLICATES}. Cost of {@link #build()}: O(n + E) time (counting sort by target, then
 * per-row insertion or radix sort; no comparison sort of all edges); memory: the finished graph
 * (which keeps an unused tail of merged duplicates when they were at most 1/8 of its entries) plus,
 * briefly, a trimmed copy of its columns when more duplicates than that were merged. The arrays are
 * read, never modified or retained.
 *
 * <p>Thread safety: not thread safe; use one builder per thread. The built graph is immutable.
 */
public final class CsrGraphBuilder {

  /** Default self-loop policy: {@link SelfLoopPolicy#ADD} (GAT convention). */
  public static final SelfLoopPolicy DEFAULT_SELF_LOOPS = SelfLoopPolicy.ADD;

  /** Default direction policy: {@link DirectionPolicy#KEEP}. */
  public static final DirectionPolicy DEFAULT_DIRECTION = DirectionPolicy.KEEP;

  /** Default duplicate policy: {@link DuplicatePolicy#MERGE}. */
  public static final DuplicatePolicy DEFAULT_DUPLICATES = DuplicatePolicy.MERGE;

  private final int[] sources;
  private final int[] targets;
  private final int nodeCount;
  private SelfLoopPolicy selfLoops = DEFAULT_SELF_LOOPS;
  private DirectionPolicy direction = DEFAULT_DIRECTION;
  private DuplicatePolicy duplicates = DEFAULT_DUPLICATES;

  private CsrGraphBuilder(int[] sources, int[] targets, int nodeCount) {
    this.sources = sources;
    this.targets = targets;
    this.nodeCount = nodeCount;
  }

  /**
   * Starts a builder over the edges {@code sources[k] -> targets[k]} on nodes {@code
   * 0..nodeCount-1}. The arrays are validated in {@link #build()}, which reads them; do not modify
   * them until it returns.
   *
   * @param sources input, length E, not modified: the source node of each edge
   * @param targets input, length E, not modified: the target node of each edge
   * @param nodeCount the number of nodes n, at least 0
   * @return a builder with the default policies
   * @throws NullPointerException if an array is null
   * @throws IllegalArgumentException if the lengths differ or {@code nodeCount} is negative
   */
  public static CsrGraphBuilder fromEdges(int[] sources, int[] targets, int nodeCount) {
    Objects.requireNonNull(sources, "sources");
    Objects.requireNonNull(targets, "targets");
    if (sources.length != targets.length) {
      throw new IllegalArgumentException(
          "sources and targets must have the same length (one entry per edge), got "
              + sources.length
              + " != "
              + targets.length);
    }
    if (nodeCount < 0) {
      throw new IllegalArgumentException("node count must be at least 0, got " + nodeCount);
    }
    return new CsrGraphBuilder(sources, targets, nodeCount);
  }

  /**
   * Sets all three policies at once, typically to build the graph the way a model's training graph
   * was built ({@code model.graphPolicies()}).
   *
   * @param conventions direction, self-loop and duplicate policies, not null
   * @return this builder
   */
  public CsrGraphBuilder policies(GraphPolicies conventions) {
    Objects.requireNonNull(conventions, "conventions");
    return direction(conventions.direction())
        .selfLoops(conventions.selfLoops())
        .duplicates(conventions.duplicates());
  }

  /**
   * Sets the self-loop policy.
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public CsrGraphBuilder selfLoops(SelfLoopPolicy policy) {
    this.selfLoops = Objects.requireNonNull(policy, "selfLoops policy");
    return this;
  }

  /**
   * Sets the direction policy.
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public CsrGraphBuilder direction(DirectionPolicy policy) {
    this.direction = Objects.requireNonNull(policy, "direction policy");
    return this;
  }

  /**
   * Sets the duplicate-edge policy.
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public CsrGraphBuilder duplicates(DuplicatePolicy policy) {
    this.duplicates = Objects.requireNonNull(policy, "duplicates policy");
    return this;
  }

  /**
   * Validates the edges and builds the graph. O(n + E).
   *
   * @return the graph; rows are targets, columns sources, sorted, no duplicates
   * @throws dev.heed.attention.MemoryBudgetExceededException if the graph would not fit the heap
   *     budget ({@link dev.heed.attention.MemoryBudget}); checked before allocating
   * @throws IllegalArgumentException if an edge endpoint is outside {@code 0..n-1} (naming the
   *     array, index and value), if an edge is repeated under {@link DuplicatePolicy#REJECT}
   *     (naming the edge and both indices), or if the graph would exceed {@link Integer#MAX_VALUE}
   *     - 8 entries
   */
  public CsrGraph build() {
    checkRange("sources", sources);
    checkRange("targets", targets);
    return CsrAssembler.assemble(new ArraySource(), nodeCount, selfLoops, direction, duplicates);
  }

  private void checkRange(String name, int[] nodes) {
    for (int k = 0; k < nodes.length; k++) {
      int v = nodes[k];
      if (v < 0 || v >= nodeCount) {
        throw new IllegalArgumentException(
            name
                + "["
                + k
                + "] = "
                + v
                + " is not a node: node ids run over 0.."
                + (nodeCount - 1)
                + " (nodeCount = "
                + nodeCount
                + "); pass a larger node count or fix the edge");
      }
    }
  }

  private final class ArraySource implements EdgeSource {
    @Override
    public void forEachEdge(Visitor visitor) {
      int[] s = sources;
      int[] t = targets;
      for (int k = 0; k < s.length; k++) {
        visitor.edge(k, s[k], t[k]);
      }
    }

    @Override
    public int nodeCount() {
      return nodeCount;
    }

    @Override
    public String describePosition(long position) {
      return position < 0
          ? "the sources and targets arrays"
          : "sources[" + position + "]/targets[" + position + "]";
    }

    @Override
    public String describeNode(int index) {
      return Integer.toString(index);
    }
  }
}
