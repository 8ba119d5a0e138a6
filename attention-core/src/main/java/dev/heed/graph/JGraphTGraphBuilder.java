package dev.heed.graph;

import java.util.Objects;
import org.jgrapht.Graph;
import org.jgrapht.GraphType;

/**
 * Builds a {@link CsrGraph} and its {@link NodeIndex} from any JGraphT {@link Graph}. A directed
 * edge {@code u -> v} makes {@code v} attend to {@code u}; an undirected edge {@code {u, v}} works
 * in both directions (so for an undirected graph the {@link DirectionPolicy} makes no difference).
 * Vertex {@code k} of {@code graph.vertexSet()}'s iteration order becomes node {@code k} (for
 * JGraphT's default graphs that is insertion order), and the returned index maps both ways.
 *
 * <pre>{@code
 * Graph<String, DefaultEdge> social = new SimpleGraph<>(DefaultEdge.class);
 * // ... add vertices and edges ...
 * IndexedGraph<String> built =
 *     JGraphTGraphBuilder.from(social).selfLoops(SelfLoopPolicy.ADD).build();
 * int alice = built.nodes().requireIndexOf("alice");
 * int friends = built.graph().degree(alice) - 1; // minus her own self-loop
 * }</pre>
 *
 * <p>Defaults: {@link #DEFAULT_SELF_LOOPS}, {@link #DEFAULT_DIRECTION}, {@link #DEFAULT_DUPLICATES}
 * (parallel edges of a multigraph are merged). Cost: O(n + E) plus JGraphT's own edge lookups; the
 * JGraphT graph is read, never modified. Mixed graphs (some edges directed, some not) are rejected.
 *
 * <p>Thread safety: not thread safe; the JGraphT graph must not change during {@link #build()}.
 *
 * @param <V> the vertex type, used as the node id
 */
public final class JGraphTGraphBuilder<V> {

  /** Default self-loop policy: {@link SelfLoopPolicy#ADD} (GAT convention). */
  public static final SelfLoopPolicy DEFAULT_SELF_LOOPS = SelfLoopPolicy.ADD;

  /** Default direction policy: {@link DirectionPolicy#KEEP}. */
  public static final DirectionPolicy DEFAULT_DIRECTION = DirectionPolicy.KEEP;

  /** Default duplicate policy: {@link DuplicatePolicy#MERGE}. */
  public static final DuplicatePolicy DEFAULT_DUPLICATES = DuplicatePolicy.MERGE;

  private final Graph<V, ?> graph;
  private SelfLoopPolicy selfLoops = DEFAULT_SELF_LOOPS;
  private DirectionPolicy direction = DEFAULT_DIRECTION;
  private DuplicatePolicy duplicates = DEFAULT_DUPLICATES;

  private JGraphTGraphBuilder(Graph<V, ?> graph) {
    this.graph = graph;
  }

  /**
   * Starts a builder over {@code graph}.
   *
   * @param graph input, not modified: a directed or undirected JGraphT graph
   * @param <V> the vertex type
   * @return a builder with the default policies
   * @throws NullPointerException if {@code graph} is null
   */
  public static <V> JGraphTGraphBuilder<V> from(Graph<V, ?> graph) {
    return new JGraphTGraphBuilder<>(Objects.requireNonNull(graph, "graph"));
  }

  /**
   * Sets all three policies at once, typically to build the graph the way a model's training graph
   * was built ({@code model.graphPolicies()}).
   *
   * @param conventions direction, self-loop and duplicate policies, not null
   * @return this builder
   */
  public JGraphTGraphBuilder<V> policies(GraphPolicies conventions) {
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
  public JGraphTGraphBuilder<V> selfLoops(SelfLoopPolicy policy) {
    this.selfLoops = Objects.requireNonNull(policy, "selfLoops policy");
    return this;
  }

  /**
   * Sets the direction policy (ignored for undirected graphs, which are symmetric already).
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public JGraphTGraphBuilder<V> direction(DirectionPolicy policy) {
    this.direction = Objects.requireNonNull(policy, "direction policy");
    return this;
  }

  /**
   * Sets the duplicate-edge policy (parallel edges of multigraphs; under {@link
   * DirectionPolicy#SYMMETRISE} also {@code u -> v} together with {@code v -> u}).
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public JGraphTGraphBuilder<V> duplicates(DuplicatePolicy policy) {
    this.duplicates = Objects.requireNonNull(policy, "duplicates policy");
    return this;
  }

  /**
   * Builds the graph and the vertex index. O(n + E).
   *
   * @return the graph with its index; {@code nodes().idOf(i)} is the vertex of node {@code i}
   * @throws IllegalArgumentException if the graph is mixed (directed and undirected edges), if an
   *     edge is repeated under {@link DuplicatePolicy#REJECT} (naming the edge), or if it has more
   *     than {@link Integer#MAX_VALUE} - 8 entries
   */
  public IndexedGraph<V> build() {
    GraphType type = graph.getType();
    if (type.isMixed()) {
      throw new IllegalArgumentException(
          "mixed JGraphT graphs (some edges directed, some undirected) are not supported; convert"
              + " it to a directed or an undirected graph first");
    }
    boolean undirected = type.isUndirected();
    int n = graph.vertexSet().size();
    ObjectIdTable<V> table = new ObjectIdTable<>(n);
    for (V v : graph.vertexSet()) {
      table.indexOrAdd(v);
    }
    assert table.size() == n;
    ObjectNodeIndex<V> index = table.freeze();
    DirectionPolicy effective = undirected ? DirectionPolicy.SYMMETRISE : direction;
    CsrGraph csr =
        CsrAssembler.assemble(
            new JGraphTSource<>(graph, index, undirected), n, selfLoops, effective, duplicates);
    return new IndexedGraph<>(csr, index);
  }

  private static final class JGraphTSource<V, E> implements EdgeSource {
    private final Graph<V, E> graph;
    private final ObjectNodeIndex<V> index;
    private final boolean undirected;

    JGraphTSource(Graph<V, E> graph, ObjectNodeIndex<V> index, boolean undirected) {
      this.graph = graph;
      this.index = index;
      this.undirected = undirected;
    }

    @Override
    public void forEachEdge(Visitor visitor) {
      long ordinal = 0;
      for (E e : graph.edgeSet()) {
        int s = index.indexOf(graph.getEdgeSource(e));
        int t = index.indexOf(graph.getEdgeTarget(e));
        if (s < 0 || t < 0) {
          throw new IllegalStateException(
              "edge " + e + " has an endpoint that is not in vertexSet(); was the graph modified?");
        }
        visitor.edge(ordinal++, s, t);
      }
    }

    @Override
    public int nodeCount() {
      return index.size();
    }

    @Override
    public String describePosition(long position) {
      if (position < 0) {
        return "the JGraphT graph";
      }
      long k = 0;
      for (E e : graph.edgeSet()) {
        if (k++ == position) {
          return "JGraphT edge #" + position + " (" + e + (undirected ? ", undirected)" : ")");
        }
      }
      return "JGraphT edge #" + position;
    }

    @Override
    public String describeNode(int i) {
      return String.valueOf(index.idOf(i));
    }
  }
}
