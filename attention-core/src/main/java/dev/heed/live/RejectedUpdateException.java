package dev.heed.live;

/**
 * Thrown by {@link VersionedGraph#apply} when an operation of a batch cannot be applied (an unknown
 * id, a node added twice, a duplicate edge under {@link dev.heed.graph.DuplicatePolicy#REJECT},
 * removal of an edge that is not there, ...). The whole batch is refused: the graph, its version
 * and every snapshot are unchanged. The message says what was wrong, which operation and how to fix
 * it.
 *
 * <p>Thread safety: immutable once thrown.
 */
public final class RejectedUpdateException extends IllegalArgumentException {

  private static final long serialVersionUID = 1L;

  /** The position of the refused operation in its batch. */
  private final int operation;

  RejectedUpdateException(String message, int operation) {
    super(message);
    this.operation = operation;
  }

  /**
   * Returns the position of the refused operation in its batch.
   *
   * @return the 0-based operation index
   */
  public int operation() {
    return operation;
  }
}
