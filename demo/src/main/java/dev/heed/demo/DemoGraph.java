package dev.heed.demo;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import java.util.Objects;

/**
 * The demo's graph policy, in one place: the demo model was trained on exactly this graph, so every
 * program that classifies the demo network (the {@code heed classify --demo} verb, the demo test)
 * must build it here.
 *
 * <ul>
 *   <li>edges {@code sender -> receiver}, one per transfer ({@link
 *       PaymentsNetwork#transferSources()} → {@link PaymentsNetwork#transferTargets()});
 *   <li>{@link #DIRECTION} = {@link DirectionPolicy#SYMMETRISE}: an account attends to both the
 *       accounts that paid it and the accounts it paid;
 *   <li>{@link #SELF_LOOPS} = {@link SelfLoopPolicy#ADD}: every account attends to itself too, as
 *       GAT's N(i) includes i (Veličković et al. 2018, §2.1);
 *   <li>{@link #DUPLICATES} = {@link DuplicatePolicy#MERGE}: repeated transfers between the same
 *       pair (either way round) make one tie.
 * </ul>
 *
 * <p>Thread safety: stateless.
 */
public final class DemoGraph {

  /** Direction policy of the demo graph: symmetrise (attend to senders and receivers). */
  public static final DirectionPolicy DIRECTION = DirectionPolicy.SYMMETRISE;

  /** Self-loop policy of the demo graph: add one per account. */
  public static final SelfLoopPolicy SELF_LOOPS = SelfLoopPolicy.ADD;

  /** Duplicate policy of the demo graph: merge repeated ties. */
  public static final DuplicatePolicy DUPLICATES = DuplicatePolicy.MERGE;

  /** The three policies together, as the demo model file records them. */
  public static final GraphPolicies CONVENTIONS =
      new GraphPolicies(DIRECTION, SELF_LOOPS, DUPLICATES);

  private DemoGraph() {}

  /**
   * Builds the demo graph of a payments network with the policy above. Node i is account i.
   *
   * <p>Cost: O(n + T log T) for T transfers; memory about 8 bytes per tie.
   *
   * @param network the network, not modified
   * @return the graph, n = {@link PaymentsNetwork#accountCount()} nodes
   */
  public static CsrGraph build(PaymentsNetwork network) {
    Objects.requireNonNull(network, "network");
    return CsrGraphBuilder.fromEdges(
            network.transferSources(), network.transferTargets(), network.accountCount())
        .direction(DIRECTION)
        .selfLoops(SELF_LOOPS)
        .duplicates(DUPLICATES)
        .build();
  }
}
