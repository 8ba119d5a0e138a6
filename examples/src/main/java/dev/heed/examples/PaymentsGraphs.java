package dev.heed.examples;

import dev.heed.classify.NodeFeatures;
import dev.heed.demo.DemoGraph;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.NodeIndex;
import dev.heed.graph.SelfLoopPolicy;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Objects;
import org.jgrapht.Graph;
import org.jgrapht.graph.DefaultDirectedGraph;
import org.jgrapht.graph.DefaultEdge;

/**
 * Turns the demo's invented payments network ({@link PaymentsNetwork}) into the shapes the examples
 * start from: a JGraphT graph with features keyed by account id, or a Heed graph with its node
 * index.
 *
 * <p>Graph convention used by both: the demo model's own, {@link DemoGraph} (every transfer ties
 * its two accounts in both directions, every account also attends to itself, repeated transfers
 * count once). A model must be run on the graph convention it was trained with.
 *
 * <p>Thread safety: stateless.
 */
public final class PaymentsGraphs {

  /** Self-loop policy of the examples' payments graphs: the demo model's. */
  public static final SelfLoopPolicy SELF_LOOPS = DemoGraph.SELF_LOOPS;

  /** Direction policy of the examples' payments graphs: the demo model's. */
  public static final DirectionPolicy DIRECTION = DemoGraph.DIRECTION;

  /** Duplicate policy of the examples' payments graphs: the demo model's. */
  public static final DuplicatePolicy DUPLICATES = DemoGraph.DUPLICATES;

  private PaymentsGraphs() {}

  /**
   * Returns the network as a directed JGraphT graph over account ids (an edge per sender → receiver
   * pair). Vertices are added in the order accounts first appear in the transfer list, then the
   * accounts without transfers, so vertex order is deliberately not account-number order.
   *
   * @param network the network, not modified
   * @return a new JGraphT graph; O(n + T)
   */
  public static Graph<String, DefaultEdge> toJGraphT(PaymentsNetwork network) {
    Objects.requireNonNull(network, "network");
    Graph<String, DefaultEdge> graph = new DefaultDirectedGraph<>(DefaultEdge.class);
    int[] sources = network.transferSources();
    int[] targets = network.transferTargets();
    for (int t = 0; t < sources.length; t++) {
      String from = network.accountId(sources[t]);
      String to = network.accountId(targets[t]);
      graph.addVertex(from);
      graph.addVertex(to);
      graph.addEdge(from, to); // a repeated pair returns null and adds nothing
    }
    for (int a = 0; a < network.accountCount(); a++) {
      graph.addVertex(network.accountId(a));
    }
    return graph;
  }

  /**
   * Returns each account's feature row, keyed by account id, the way features often arrive from a
   * feature store.
   *
   * @param network the network, not modified
   * @return a new map, in account order
   */
  public static Map<String, float[]> featuresById(PaymentsNetwork network) {
    int f = network.featureNames().size();
    float[] all = network.features();
    Map<String, float[]> byId = new LinkedHashMap<>();
    for (int a = 0; a < network.accountCount(); a++) {
      float[] row = new float[f];
      System.arraycopy(all, a * f, row, 0, f);
      byId.put(network.accountId(a), row);
    }
    return byId;
  }

  /**
   * Returns the network as a Heed graph whose node i is account i, with an index from account ids
   * to nodes.
   *
   * @param network the network, not modified
   * @return the graph and its index; O(n + T log T)
   */
  public static IndexedGraph<String> toIndexedGraph(PaymentsNetwork network) {
    Objects.requireNonNull(network, "network");
    CsrGraph graph = DemoGraph.build(network);
    String[] ids = new String[network.accountCount()];
    for (int a = 0; a < ids.length; a++) {
      ids[a] = network.accountId(a);
    }
    return new IndexedGraph<>(graph, new AccountIndex(ids));
  }

  /**
   * Returns the features of {@link #toIndexedGraph}'s nodes (row i = account i).
   *
   * @param network the network, not modified
   * @return the features
   */
  public static NodeFeatures features(PaymentsNetwork network) {
    return NodeFeatures.ofRowMajor(
        network.features(), network.accountCount(), network.featureNames().size());
  }

  /** Account ids in node order, with a hash map back; any {@link NodeIndex} will do. */
  private static final class AccountIndex implements NodeIndex<String> {
    private final String[] ids;
    private final Map<String, Integer> indices;

    AccountIndex(String[] ids) {
      this.ids = ids;
      this.indices = new HashMap<>(ids.length * 2);
      for (int i = 0; i < ids.length; i++) {
        indices.put(ids[i], i);
      }
    }

    @Override
    public int size() {
      return ids.length;
    }

    @Override
    public String idOf(int index) {
      return ids[Objects.checkIndex(index, ids.length)];
    }

    @Override
    public int indexOf(String id) {
      Integer index = indices.get(Objects.requireNonNull(id, "id"));
      return index == null ? -1 : index;
    }
  }
}
