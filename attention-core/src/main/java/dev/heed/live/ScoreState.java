package dev.heed.live;

/**
 * Where a node's score stands in an {@link IncrementalScorer}, as of the version a {@link
 * LiveScore} quotes.
 *
 * <p>Thread safety: an enum; immutable.
 */
public enum ScoreState {
  /** The probabilities equal a full pass over that version (to float rounding). */
  FRESH,
  /**
   * An update reached the node's receptive field and its recomputation has not finished yet (the
   * refresh ran out of budget, or no refresh has ingested the update yet); no probabilities are
   * given, so a stale score is never served.
   */
  PENDING,
  /**
   * The node, or a node in its receptive field, has no features yet, so the model cannot score it;
   * no probabilities are given.
   */
  NOT_SCORABLE
}
