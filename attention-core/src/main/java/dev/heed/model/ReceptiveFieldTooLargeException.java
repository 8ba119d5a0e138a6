package dev.heed.model;

/**
 * Thrown when a receptive field passes its {@link FieldCap}. Planning throws it as soon as the
 * count passes the cap, before any projection or attention runs, so the size it reports is how far
 * the count got (at least one over the cap), not necessarily the whole field. The message names the
 * target, the size, the cap and how to raise it.
 *
 * <p>Thread safety: immutable after construction.
 */
public final class ReceptiveFieldTooLargeException extends IllegalStateException {

  private static final long serialVersionUID = 1L;

  private final int target;
  private final boolean entriesBound;
  private final long size;
  private final long cap;

  /**
   * Creates the exception.
   *
   * @param message what was planned, the size, the cap, and how to raise it
   * @param target the target node the field is charged to (the one that reached the most nodes), or
   *     -1 if the call had no single one
   * @param entriesBound true if the entry bound was passed, false for the node bound
   * @param size the nodes or entries counted when planning stopped
   * @param cap the bound that was passed
   */
  public ReceptiveFieldTooLargeException(
      String message, int target, boolean entriesBound, long size, long cap) {
    super(message);
    this.target = target;
    this.entriesBound = entriesBound;
    this.size = size;
    this.cap = cap;
  }

  /**
   * Returns the target node the field is charged to: with several targets, the one from which the
   * most of the counted nodes were first reached.
   *
   * @return a node id, or -1 if no single target applies
   */
  public int target() {
    return target;
  }

  /**
   * Returns whether the entry bound ({@link FieldCap#maxEntries()}) rather than the node bound was
   * passed.
   *
   * @return true for entries, false for nodes
   */
  public boolean entriesBound() {
    return entriesBound;
  }

  /**
   * Returns the nodes or entries counted when planning stopped: more than {@link #cap()}.
   *
   * @return the count
   */
  public long size() {
    return size;
  }

  /**
   * Returns the bound that was passed.
   *
   * @return the cap's node or entry bound
   */
  public long cap() {
    return cap;
  }
}
