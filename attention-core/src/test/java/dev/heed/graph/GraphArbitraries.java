package dev.heed.graph;

import java.util.Arrays;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.Combinators;

/**
 * Generators (jqwik) of edge lists and graphs for property tests: random lists, and the degenerate
 * shapes that random lists rarely hit: no nodes, one node, no edges, only self-loops, one hub that
 * every edge touches (inward or outward), and lists that repeat every edge.
 */
public final class GraphArbitraries {

  private GraphArbitraries() {}

  /**
   * An edge list over {@code n} nodes: edge k is {@code sources[k] -> targets[k]}.
   *
   * @param n the node count
   * @param sources the sources
   * @param targets the targets, as many
   */
  public record EdgeList(int n, int[] sources, int[] targets) {
    /**
     * Builds the graph with the given policies (duplicates merged).
     *
     * @param selfLoops the self-loop policy
     * @param direction the direction policy
     * @return the graph
     */
    public CsrGraph build(SelfLoopPolicy selfLoops, DirectionPolicy direction) {
      return CsrGraphBuilder.fromEdges(sources, targets, n)
          .selfLoops(selfLoops)
          .direction(direction)
          .build();
    }

    @Override
    public String toString() {
      return "n=" + n + " src=" + Arrays.toString(sources) + " dst=" + Arrays.toString(targets);
    }
  }

  /**
   * Edge lists of every shape, up to {@code maxNodes} nodes (the hub shape up to 300).
   *
   * @param maxNodes the most nodes of a random list, at least 1
   * @return the generator
   */
  public static Arbitrary<EdgeList> edgeLists(int maxNodes) {
    return Arbitraries.oneOf(
        randomLists(maxNodes),
        emptyGraphs(),
        selfLoopsOnly(maxNodes),
        hubs(),
        repeatedEdges(maxNodes),
        oneNode());
  }

  /**
   * Random edge lists of up to {@code 3 * maxNodes} edges.
   *
   * @param maxNodes the most nodes, at least 1
   * @return the generator
   */
  public static Arbitrary<EdgeList> randomLists(int maxNodes) {
    return Arbitraries.integers()
        .between(1, maxNodes)
        .flatMap(
            n ->
                Arbitraries.integers()
                    .between(0, n - 1)
                    .array(int[].class)
                    .ofMaxSize(3 * maxNodes)
                    .flatMap(
                        s ->
                            Arbitraries.integers()
                                .between(0, n - 1)
                                .array(int[].class)
                                .ofSize(s.length)
                                .map(t -> new EdgeList(n, s, t))));
  }

  private static Arbitrary<EdgeList> emptyGraphs() {
    return Arbitraries.integers().between(0, 5).map(n -> new EdgeList(n, new int[0], new int[0]));
  }

  private static Arbitrary<EdgeList> oneNode() {
    return Arbitraries.integers()
        .between(0, 3)
        .map(k -> new EdgeList(1, new int[k], new int[k])); // k copies of 0 -> 0
  }

  private static Arbitrary<EdgeList> selfLoopsOnly(int maxNodes) {
    return Arbitraries.integers()
        .between(1, maxNodes)
        .map(
            n -> {
              int[] ids = new int[n];
              Arrays.setAll(ids, i -> i);
              return new EdgeList(n, ids, ids.clone());
            });
  }

  /** Every edge touches node 0, all inward or all outward. */
  private static Arbitrary<EdgeList> hubs() {
    return Combinators.combine(Arbitraries.integers().between(2, 300), Arbitraries.of(0, 1))
        .as(
            (n, inward) -> {
              int[] others = new int[n - 1];
              Arrays.setAll(others, i -> i + 1);
              int[] hub = new int[n - 1];
              return inward == 0
                  ? new EdgeList(n, others, hub)
                  : new EdgeList(n, hub, others.clone());
            });
  }

  private static Arbitrary<EdgeList> repeatedEdges(int maxNodes) {
    return randomLists(maxNodes)
        .map(
            e -> {
              int m = e.sources().length;
              int[] s = Arrays.copyOf(e.sources(), 2 * m);
              int[] t = Arrays.copyOf(e.targets(), 2 * m);
              System.arraycopy(e.sources(), 0, s, m, m);
              System.arraycopy(e.targets(), 0, t, m, m);
              return new EdgeList(e.n(), s, t);
            });
  }
}
