package dev.heed.graph;

import java.util.ArrayList;
import java.util.List;
import java.util.Objects;

/**
 * How a graph was built from its edge list: edge direction, self-loops and repeated edges. A model
 * is trained on a graph built one way; classifying with a graph built another way changes what
 * every node attends to and gives different predictions with no error, so a model file records the
 * conventions of its training graph and the command line builds the graph the same way.
 *
 * <p>Thread safety: an immutable value.
 *
 * @param direction whether edges are kept as given or made undirected
 * @param selfLoops whether every node attends to itself
 * @param duplicates whether repeated edges are merged or rejected
 */
public record GraphPolicies(
    DirectionPolicy direction, SelfLoopPolicy selfLoops, DuplicatePolicy duplicates) {

  /**
   * The conventions of the graph-attention papers' graphs and of Heed's demo: undirected ties, a
   * self-loop per node (Veličković et al. 2018: N(i) includes i), repeated ties merged.
   */
  public static final GraphPolicies UNDIRECTED_WITH_SELF_LOOPS =
      new GraphPolicies(DirectionPolicy.SYMMETRISE, SelfLoopPolicy.ADD, DuplicatePolicy.MERGE);

  /**
   * Creates the conventions.
   *
   * @throws NullPointerException if an argument is null
   */
  public GraphPolicies {
    Objects.requireNonNull(direction, "direction");
    Objects.requireNonNull(selfLoops, "selfLoops");
    Objects.requireNonNull(duplicates, "duplicates");
  }

  /**
   * Lists where {@code other} differs from these conventions, in the words of the model format and
   * the command line, for error messages (for example {@code "direction: keep instead of
   * symmetrise"}).
   *
   * @param other the conventions to compare with
   * @return one entry per difference; empty if they are equal
   */
  public List<String> differences(GraphPolicies other) {
    Objects.requireNonNull(other, "other");
    List<String> out = new ArrayList<>();
    if (other.direction != direction) {
      out.add("direction: " + word(other.direction) + " instead of " + word(direction));
    }
    if (other.selfLoops != selfLoops) {
      out.add("self-loops: " + word(other.selfLoops) + " instead of " + word(selfLoops));
    }
    if (other.duplicates != duplicates) {
      out.add("duplicates: " + word(other.duplicates) + " instead of " + word(duplicates));
    }
    return out;
  }

  /**
   * The word for a policy in the model format and on the command line: {@code symmetrise}, {@code
   * keep}, {@code add}, {@code as-given}, {@code merge}, {@code reject}.
   *
   * @param policy a direction, self-loop or duplicate policy
   * @return its word
   */
  public static String word(Enum<?> policy) {
    return policy.name().toLowerCase(java.util.Locale.ROOT).replace('_', '-');
  }

  /**
   * Reads a policy from its word ({@link #word}).
   *
   * @param type the policy's enum type
   * @param word its word
   * @param <E> the enum type
   * @return the policy
   * @throws IllegalArgumentException naming the accepted words if {@code word} is none of them
   */
  public static <E extends Enum<E>> E policy(Class<E> type, String word) {
    Objects.requireNonNull(word, "word");
    for (E value : type.getEnumConstants()) {
      if (word(value).equals(word)) {
        return value;
      }
    }
    List<String> accepted = new ArrayList<>();
    for (E value : type.getEnumConstants()) {
      accepted.add(word(value));
    }
    throw new IllegalArgumentException("'" + word + "' is not one of " + accepted);
  }

  @Override
  public String toString() {
    return "direction "
        + word(direction)
        + ", self-loops "
        + word(selfLoops)
        + ", duplicates "
        + word(duplicates);
  }
}
