package dev.heed.demo;

import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;

/**
 * Generates the demo's invented payments network with a seed: a contextual stochastic block model
 * (Deshpande, Sen, Montanari, Mossel, NeurIPS 2018: a block model for the edges plus features drawn
 * around a per-block mean) with heavy-tailed degrees (each account's propensity to transact is
 * drawn from a Pareto distribution, as in degree-corrected block models).
 *
 * <p>The scenario is ours: ordinary customers pay each other and pay merchants; merchants pay out
 * refunds; money-mule rings receive money from ordinary accounts, pass it around inside the ring
 * and cash it out. Features are noisy per-role quantities, so features alone separate the roles
 * only partly and the transfer graph carries the rest.
 *
 * <p>Deterministic: the same seed and sizes give the same network on every JVM.
 *
 * <p>Thread safety: immutable; {@link #generate()} may be called from any thread.
 */
public final class PaymentsNetworkGenerator {

  /** Default number of accounts. */
  public static final int DEFAULT_ACCOUNTS = 50_000;

  /** Default number of transfers. */
  public static final int DEFAULT_TRANSFERS = 500_000;

  /** Default seed of the bundled demo. */
  public static final long DEFAULT_SEED = 20261201L;

  /** Feature names, in column order (each standardised over all accounts). */
  public static final List<String> FEATURE_NAMES =
      List.of(
          "account_age_years",
          "log_mean_amount",
          "night_share",
          "log_in_out_ratio",
          "devices_seen",
          "business_registration");

  static final int ORDINARY = 0;
  static final int MERCHANT = 1;
  static final int MULE = 2;
  private static final double MERCHANT_SHARE = 0.08;
  private static final double MULE_SHARE = 0.02;
  static final int RING_SIZE = 10;
  private static final double PARETO_SHAPE = 2.1;
  private static final double PROPENSITY_CAP = 300.0;

  /**
   * Share of transfers between each (sender role, receiver role), rows = sender. Sums to 1.
   * Invented for the demo.
   */
  private static final double[][] BLOCK_SHARES = {
    {0.400, 0.450, 0.040}, // ordinary -> ordinary, merchant, mule
    {0.050, 0.005, 0.000}, // merchant -> ...
    {0.015, 0.000, 0.040}, // mule -> ... (mule -> mule stays inside a ring)
  };

  private final int accounts;
  private final int transfers;
  private final long seed;

  private PaymentsNetworkGenerator(int accounts, int transfers, long seed) {
    this.accounts = accounts;
    this.transfers = transfers;
    this.seed = seed;
  }

  /**
   * Returns the generator of the bundled demo: {@value #DEFAULT_ACCOUNTS} accounts, {@value
   * #DEFAULT_TRANSFERS} transfers, seed {@value #DEFAULT_SEED}.
   *
   * @return the generator
   */
  public static PaymentsNetworkGenerator bundledDemo() {
    return new PaymentsNetworkGenerator(DEFAULT_ACCOUNTS, DEFAULT_TRANSFERS, DEFAULT_SEED);
  }

  /**
   * Returns a generator of a network with the given sizes.
   *
   * @param accounts number of accounts, at least 1000 (so every role has members)
   * @param transfers number of transfers, at least 1
   * @param seed the random seed
   * @return the generator
   * @throws IllegalArgumentException if a size is out of range
   */
  public static PaymentsNetworkGenerator of(int accounts, int transfers, long seed) {
    if (accounts < 1000) {
      throw new IllegalArgumentException(
          "accounts must be at least 1000 so that every role has members, got " + accounts);
    }
    if (transfers < 1) {
      throw new IllegalArgumentException("transfers must be at least 1, got " + transfers);
    }
    return new PaymentsNetworkGenerator(accounts, transfers, seed);
  }

  /**
   * Generates the network. Cost O(n + T log n) for T transfers.
   *
   * @return the network
   */
  public PaymentsNetwork generate() {
    SplittableRandom random = new SplittableRandom(seed);
    int merchants = (int) Math.round(accounts * MERCHANT_SHARE);
    int mules = (int) Math.round(accounts * MULE_SHARE) / RING_SIZE * RING_SIZE;
    int[] roles = new int[accounts];
    Arrays.fill(roles, 0, merchants, MERCHANT);
    Arrays.fill(roles, merchants, merchants + mules, MULE);
    shuffle(roles, random);

    int[][] members = new int[3][];
    int[] counts = new int[3];
    for (int r : roles) {
      counts[r]++;
    }
    for (int r = 0; r < 3; r++) {
      members[r] = new int[counts[r]];
    }
    int[] fill = new int[3];
    for (int a = 0; a < accounts; a++) {
      members[roles[a]][fill[roles[a]]++] = a;
    }

    double[] propensity = new double[accounts];
    for (int a = 0; a < accounts; a++) {
      // Pareto(x_min = 1, shape) by inversion; capped so no single account takes over.
      propensity[a] =
          Math.min(PROPENSITY_CAP, Math.pow(1.0 - random.nextDouble(), -1.0 / PARETO_SHAPE));
    }
    double[][] cumulative = new double[3][];
    for (int r = 0; r < 3; r++) {
      cumulative[r] = cumulativeWeights(members[r], propensity);
    }

    double[] pairCumulative = new double[9];
    double total = 0;
    for (int s = 0; s < 3; s++) {
      for (int t = 0; t < 3; t++) {
        total += BLOCK_SHARES[s][t];
        pairCumulative[s * 3 + t] = total;
      }
    }

    int[] sources = new int[transfers];
    int[] targets = new int[transfers];
    int made = 0;
    while (made < transfers) {
      int pair = search(pairCumulative, random.nextDouble() * total);
      int senderRole = pair / 3;
      int receiverRole = pair % 3;
      int source = pick(members[senderRole], cumulative[senderRole], random);
      int target;
      if (senderRole == MULE && receiverRole == MULE) {
        target = ringMate(source, members[MULE], random);
      } else {
        target = pick(members[receiverRole], cumulative[receiverRole], random);
      }
      if (source == target) {
        continue;
      }
      sources[made] = source;
      targets[made] = target;
      made++;
    }

    int f = FEATURE_NAMES.size();
    double[] means = new double[f];
    double[] scales = new double[f];
    float[] features = features(roles, random, means, scales);
    PaymentsNetwork.Split[] splits = new PaymentsNetwork.Split[accounts];
    for (int a = 0; a < accounts; a++) {
      double u = random.nextDouble();
      splits[a] =
          u < 0.6
              ? PaymentsNetwork.Split.TRAIN
              : u < 0.8 ? PaymentsNetwork.Split.VALIDATION : PaymentsNetwork.Split.TEST;
    }
    String[] ids = new String[accounts];
    for (int a = 0; a < accounts; a++) {
      ids[a] = String.format("acct-%06d", a);
    }
    return new PaymentsNetwork(
        ids,
        sources,
        targets,
        FEATURE_NAMES,
        features,
        roles,
        splits,
        new PaymentsNetwork.Standardisation(means, scales),
        propensity);
  }

  /** Mule rings are consecutive runs of {@link #RING_SIZE} in the mule member list. */
  private static int ringMate(int mule, int[] mules, SplittableRandom random) {
    int at = Arrays.binarySearch(mules, mule);
    int ringStart = at / RING_SIZE * RING_SIZE;
    int mate;
    do {
      mate = mules[ringStart + random.nextInt(RING_SIZE)];
    } while (mate == mule);
    return mate;
  }

  private float[] features(int[] roles, SplittableRandom random, double[] means, double[] scales) {
    int f = FEATURE_NAMES.size();
    double[] raw = new double[accounts * f];
    for (int a = 0; a < accounts; a++) {
      drawRawFeatures(roles[a], random, raw, a * f);
    }
    float[] standardised = new float[raw.length];
    for (int c = 0; c < f; c++) {
      double mean = 0;
      for (int a = 0; a < accounts; a++) {
        mean += raw[a * f + c];
      }
      mean /= accounts;
      double var = 0;
      for (int a = 0; a < accounts; a++) {
        double d = raw[a * f + c] - mean;
        var += d * d;
      }
      double sd = Math.sqrt(var / accounts);
      means[c] = mean;
      scales[c] = sd == 0 ? 1 : sd;
      for (int a = 0; a < accounts; a++) {
        standardised[a * f + c] = (float) ((raw[a * f + c] - mean) / scales[c]);
      }
    }
    return standardised;
  }

  /**
   * Draws one account's raw (unstandardised) features for its role into {@code raw[offset .. offset
   * + 5]}, consuming the random stream in a fixed order.
   */
  static void drawRawFeatures(int role, SplittableRandom random, double[] raw, int o) {
    switch (role) {
      case MERCHANT -> {
        raw[o] = Math.max(0.05, 7.0 + 5.0 * random.nextGaussian());
        raw[o + 1] = 4.1 + 0.9 * random.nextGaussian();
        raw[o + 2] = clamp01(0.06 + 0.06 * random.nextGaussian());
        raw[o + 3] = 0.8 + 0.7 * random.nextGaussian();
        raw[o + 4] = Math.max(1, Math.round(2.2 + 1.5 * random.nextGaussian()));
        raw[o + 5] = random.nextDouble() < 0.7 ? 1 : 0;
      }
      case MULE -> {
        raw[o] = Math.max(0.05, 2.5 + 2.5 * random.nextGaussian());
        raw[o + 1] = 4.0 + 0.9 * random.nextGaussian();
        raw[o + 2] = clamp01(0.14 + 0.10 * random.nextGaussian());
        raw[o + 3] = 0.1 + 0.6 * random.nextGaussian();
        raw[o + 4] = Math.max(1, Math.round(2.4 + 1.5 * random.nextGaussian()));
        raw[o + 5] = random.nextDouble() < 0.05 ? 1 : 0;
      }
      default -> {
        raw[o] = Math.max(0.05, 6.0 + 4.0 * random.nextGaussian());
        raw[o + 1] = 3.6 + 0.8 * random.nextGaussian();
        raw[o + 2] = clamp01(0.08 + 0.07 * random.nextGaussian());
        raw[o + 3] = 0.0 + 0.6 * random.nextGaussian();
        raw[o + 4] = Math.max(1, Math.round(1.6 + 1.0 * random.nextGaussian()));
        raw[o + 5] = random.nextDouble() < 0.04 ? 1 : 0;
      }
    }
  }

  private static double clamp01(double x) {
    return Math.max(0, Math.min(1, x));
  }

  private static double[] cumulativeWeights(int[] members, double[] weight) {
    double[] c = new double[members.length];
    double s = 0;
    for (int i = 0; i < members.length; i++) {
      s += weight[members[i]];
      c[i] = s;
    }
    return c;
  }

  private static int pick(int[] members, double[] cumulative, SplittableRandom random) {
    double u = random.nextDouble() * cumulative[cumulative.length - 1];
    return members[search(cumulative, u)];
  }

  /** First index whose cumulative value exceeds {@code u}. */
  private static int search(double[] cumulative, double u) {
    int lo = 0;
    int hi = cumulative.length - 1;
    while (lo < hi) {
      int mid = (lo + hi) >>> 1;
      if (cumulative[mid] > u) {
        hi = mid;
      } else {
        lo = mid + 1;
      }
    }
    return lo;
  }

  private static void shuffle(int[] a, SplittableRandom random) {
    for (int i = a.length - 1; i > 0; i--) {
      int j = random.nextInt(i + 1);
      int t = a[i];
      a[i] = a[j];
      a[j] = t;
    }
  }
}
