package dev.heed.demo;

import java.util.Arrays;
import java.util.List;
import java.util.Objects;

/**
 * The demo's invented payments network: accounts are nodes, transfers are directed edges {@code
 * source -> target} (money moves from source to target), and each account has one role. All data is
 * synthetic; it describes no real person, account or institution.
 *
 * <p>Thread safety: immutable; accessors return copies.
 */
public final class PaymentsNetwork {

  /** The roles an account can have, in label order. */
  public static final List<String> ROLES = List.of("ordinary", "merchant", "mule-ring");

  /** Where an account falls in the demo's split. */
  public enum Split {
    /** Labels the demo model was trained on. */
    TRAIN,
    /** Labels used for early stopping during training. */
    VALIDATION,
    /** Held-out labels, never seen in training; the demo's accuracy is measured on these. */
    TEST
  }

  private final String[] accountIds;
  private final int[] transferSources;
  private final int[] transferTargets;
  private final List<String> featureNames;
  private final float[] features;
  private final int[] roles;
  private final Split[] splits;
  private final Standardisation standardisation;
  private final double[] propensity;

  /**
   * How raw features became the standardised ones: {@code (raw - means[c]) / scales[c]} per column,
   * with the column means and deviations over all accounts of the network.
   */
  record Standardisation(double[] means, double[] scales) {
    float[] apply(double[] raw) {
      float[] out = new float[raw.length];
      for (int c = 0; c < raw.length; c++) {
        out[c] = (float) ((raw[c] - means[c]) / scales[c]);
      }
      return out;
    }
  }

  PaymentsNetwork(
      String[] accountIds,
      int[] transferSources,
      int[] transferTargets,
      List<String> featureNames,
      float[] features,
      int[] roles,
      Split[] splits,
      Standardisation standardisation,
      double[] propensity) {
    this.accountIds = accountIds;
    this.transferSources = transferSources;
    this.transferTargets = transferTargets;
    this.featureNames = List.copyOf(featureNames);
    this.features = features;
    this.roles = roles;
    this.splits = splits;
    this.standardisation = standardisation;
    this.propensity = propensity;
    if (transferSources.length != transferTargets.length
        || features.length != accountIds.length * featureNames.size()
        || roles.length != accountIds.length
        || splits.length != accountIds.length
        || propensity.length != accountIds.length) {
      throw new IllegalStateException("inconsistent payments network arrays");
    }
  }

  /**
   * Returns the number of accounts.
   *
   * @return n
   */
  public int accountCount() {
    return accountIds.length;
  }

  /**
   * Returns the number of transfers (directed, possibly repeated between the same two accounts).
   *
   * @return the transfer count
   */
  public int transferCount() {
    return transferSources.length;
  }

  /**
   * Returns the id of an account, such as {@code "acct-000042"}.
   *
   * @param account index in {@code 0..n-1}
   * @return its id
   */
  public String accountId(int account) {
    return accountIds[Objects.checkIndex(account, accountIds.length)];
  }

  /**
   * Returns the sending account of each transfer.
   *
   * @return a copy, length {@link #transferCount()}
   */
  public int[] transferSources() {
    return transferSources.clone();
  }

  /**
   * Returns the receiving account of each transfer.
   *
   * @return a copy, length {@link #transferCount()}
   */
  public int[] transferTargets() {
    return transferTargets.clone();
  }

  /**
   * Returns the feature names, in column order.
   *
   * @return an unmodifiable list
   */
  public List<String> featureNames() {
    return featureNames;
  }

  /**
   * Returns the features, row-major {@code [n][featureNames().size()]}, standardised over all
   * accounts (zero mean, unit variance per column).
   *
   * @return a copy
   */
  public float[] features() {
    return features.clone();
  }

  /**
   * Returns the role of each account, an index into {@link #ROLES}.
   *
   * @return a copy, length n
   */
  public int[] roles() {
    return roles.clone();
  }

  /**
   * Returns the split of each account.
   *
   * @return a copy, length n
   */
  public Split[] splits() {
    return splits.clone();
  }

  /** The column means and deviations the features were standardised with. */
  Standardisation standardisation() {
    return standardisation;
  }

  /** Each account's propensity to transact (the generator's Pareto draw); shared, not copied. */
  double[] propensity() {
    return propensity;
  }

  @Override
  public String toString() {
    int[] counts = new int[ROLES.size()];
    for (int r : roles) {
      counts[r]++;
    }
    return "PaymentsNetwork[accounts="
        + accountIds.length
        + ", transfers="
        + transferSources.length
        + ", roles="
        + Arrays.toString(counts)
        + "]";
  }
}
