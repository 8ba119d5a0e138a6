package dev.heed.demo;

import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Objects;

/**
 * Accuracy and per-role recall of predicted roles over one split of a payments network. Mule-ring
 * accounts are about 2 % of accounts, so plain accuracy hides how well they are found: recall per
 * role (correct / accounts of that role) shows it.
 *
 * <p>Thread safety: immutable; accessors return copies.
 *
 * @param split the split scored
 * @param accounts accounts in the split
 * @param accuracy correct / accounts
 * @param roleCounts accounts of each role in the split, in {@link PaymentsNetwork#ROLES} order
 * @param recall per role, correct / accounts of that role (NaN for a role with none)
 */
public record HeldOutScore(
    PaymentsNetwork.Split split, int accounts, double accuracy, int[] roleCounts, double[] recall) {

  /**
   * Copies the arrays.
   *
   * @param split see the record description
   * @param accounts see the record description
   * @param accuracy see the record description
   * @param roleCounts see the record description
   * @param recall see the record description
   */
  public HeldOutScore {
    Objects.requireNonNull(split, "split");
    roleCounts = roleCounts.clone();
    recall = recall.clone();
  }

  /**
   * Scores predictions against the network's roles over one split.
   *
   * @param predicted input, not modified: a predicted role index per account (length n)
   * @param network the network holding the true roles and splits
   * @param split the split to score
   * @return the score
   * @throws IllegalArgumentException if {@code predicted} does not have one entry per account
   */
  public static HeldOutScore of(
      int[] predicted, PaymentsNetwork network, PaymentsNetwork.Split split) {
    Objects.requireNonNull(predicted, "predicted");
    Objects.requireNonNull(network, "network");
    Objects.requireNonNull(split, "split");
    int n = network.accountCount();
    if (predicted.length != n) {
      throw new IllegalArgumentException(
          "predicted has " + predicted.length + " entries but the network has " + n + " accounts");
    }
    int[] roles = network.roles();
    PaymentsNetwork.Split[] splits = network.splits();
    int roleCount = PaymentsNetwork.ROLES.size();
    int[] counts = new int[roleCount];
    int[] hits = new int[roleCount];
    int total = 0;
    int correct = 0;
    for (int a = 0; a < n; a++) {
      if (splits[a] != split) {
        continue;
      }
      total++;
      counts[roles[a]]++;
      if (predicted[a] == roles[a]) {
        correct++;
        hits[roles[a]]++;
      }
    }
    double[] recall = new double[roleCount];
    for (int r = 0; r < roleCount; r++) {
      recall[r] = counts[r] == 0 ? Double.NaN : (double) hits[r] / counts[r];
    }
    return new HeldOutScore(
        split, total, total == 0 ? Double.NaN : (double) correct / total, counts, recall);
  }

  /**
   * Returns the accounts of each role in the split.
   *
   * @return a copy
   */
  @Override
  public int[] roleCounts() {
    return roleCounts.clone();
  }

  /**
   * Returns the recall of each role.
   *
   * @return a copy
   */
  @Override
  public double[] recall() {
    return recall.clone();
  }

  /**
   * Returns the recall of one role.
   *
   * @param role a role name from {@link PaymentsNetwork#ROLES}
   * @return its recall
   * @throws IllegalArgumentException if the role is unknown
   */
  public double recall(String role) {
    int r = PaymentsNetwork.ROLES.indexOf(role);
    if (r < 0) {
      throw new IllegalArgumentException(
          "unknown role '" + role + "'; roles are " + PaymentsNetwork.ROLES);
    }
    return recall[r];
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof HeldOutScore s
        && s.split == split
        && s.accounts == accounts
        && Double.compare(s.accuracy, accuracy) == 0
        && Arrays.equals(s.roleCounts, roleCounts)
        && Arrays.equals(s.recall, recall);
  }

  @Override
  public int hashCode() {
    return Objects.hash(split, accounts, accuracy, Arrays.hashCode(roleCounts));
  }

  @Override
  public String toString() {
    StringBuilder b =
        new StringBuilder(
            String.format(
                Locale.ROOT,
                "%s split: %d accounts, accuracy %.4f; recall",
                split,
                accounts,
                accuracy));
    List<String> roles = PaymentsNetwork.ROLES;
    for (int r = 0; r < roles.size(); r++) {
      b.append(
          String.format(
              Locale.ROOT,
              "%s %s %.4f (%d)",
              r == 0 ? "" : ",",
              roles.get(r),
              recall[r],
              roleCounts[r]));
    }
    return b.toString();
  }
}
