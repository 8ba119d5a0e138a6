package dev.heed.attention;

/**
 * Thrown when a computation would need more memory than its configured budget. The message states
 * the bytes needed, the budget, and what to do instead.
 *
 * <p>Thread safety: immutable after construction.
 */
public final class MemoryBudgetExceededException extends IllegalStateException {

  private static final long serialVersionUID = 1L;

  private final long bytesNeeded;
  private final long budgetBytes;

  /**
   * Creates the exception.
   *
   * @param message what was attempted and how to avoid it
   * @param bytesNeeded the bytes the computation needs
   * @param budgetBytes the configured budget
   */
  public MemoryBudgetExceededException(String message, long bytesNeeded, long budgetBytes) {
    super(message);
    this.bytesNeeded = bytesNeeded;
    this.budgetBytes = budgetBytes;
  }

  /**
   * Returns the bytes the computation needs.
   *
   * @return bytes needed
   */
  public long bytesNeeded() {
    return bytesNeeded;
  }

  /**
   * Returns the configured budget.
   *
   * @return budget in bytes
   */
  public long budgetBytes() {
    return budgetBytes;
  }
}
