package dev.heed.demo;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.Collections;
import java.util.Comparator;
import java.util.HashSet;
import java.util.List;
import java.util.Objects;
import java.util.Set;
import java.util.SplittableRandom;

/**
 * An invented hour of new activity on the demo's payments network, as timestamped events: ordinary
 * transfers between existing customers and merchants, a few new ordinary customers, a few transfers
 * recalled minutes after they were made, and a new money-mule ring that forms during the hour. All
 * data is synthetic.
 *
 * <p><b>The ring.</b> {@value #RING_MEMBERS} new accounts open between minute 10 and minute 15 of
 * the hour (one every 30 s). From a minute after opening, each receives {@value #VICTIMS_PER_MULE}
 * transfers from distinct ordinary accounts (the victims, picked by their propensity to transact as
 * the network's own mule rings' senders are), spread over the rest of the hour; each forwards money
 * to the next member of the ring ({@value #FORWARDS_PER_MULE} times) and to random members (
 * {@value #RING_MATE_TRANSFERS} times), and pays out twice to one of two cash-out accounts
 * (existing ordinary accounts). This is the network's own mule pattern (ordinary → mule, mule →
 * mule inside the ring, mule → ordinary), arriving over time.
 *
 * <p><b>Features of new accounts</b> are drawn once, when the account opens, exactly as the
 * generator draws them for its role ({@link PaymentsNetworkGenerator}: per-role distributions, then
 * standardised with the base network's column means and deviations). In the generator, features do
 * not depend on transfers, so the stream never changes them afterwards; a stream whose features
 * depended on transfers would carry {@code set-features} events.
 *
 * <p>Deterministic: the same network and seed give the same events.
 *
 * <p>Thread safety: immutable.
 */
public final class PaymentsStream {

  /** Event kind: a new node (account) with its features. */
  public static final String ADD_NODE = "add-node";

  /** Event kind: a new edge (transfer) {@code source -> target}. */
  public static final String ADD_EDGE = "add-edge";

  /** Event kind: the edge {@code source -> target} is removed (a recalled transfer). */
  public static final String REMOVE_EDGE = "remove-edge";

  /** Length of the stream in seconds (one hour). */
  public static final double DURATION_SECONDS = 3600;

  /** Default seed of the bundled demo's stream. */
  public static final long DEFAULT_SEED = 20261204L;

  /** Accounts of the new mule ring. */
  public static final int RING_MEMBERS = PaymentsNetworkGenerator.RING_SIZE;

  /** Distinct victims paying each ring member during the hour. */
  public static final int VICTIMS_PER_MULE = 12;

  /** Transfers from each ring member to the next member of the ring. */
  public static final int FORWARDS_PER_MULE = 4;

  /** Transfers from each ring member to random other members. */
  public static final int RING_MATE_TRANSFERS = 8;

  /** Ordinary transfers between existing accounts during the hour. */
  public static final int BACKGROUND_TRANSFERS = 1500;

  /** New ordinary customers opening an account during the hour. */
  public static final int NEW_CUSTOMERS = 6;

  /** Transfers recalled a few minutes after they were made. */
  public static final int RECALLED_TRANSFERS = 5;

  private static final double RING_OPENS_AT = 600;
  private static final double RING_OPENING_GAP = 30;
  private static final int CASH_OUT_ACCOUNTS = 2;
  private static final int CASH_OUT_TRANSFERS = 4;
  private static final int TRANSFERS_PER_NEW_CUSTOMER = 4;

  /**
   * One event of the stream.
   *
   * @param time seconds from the start of the hour
   * @param kind {@link #ADD_NODE}, {@link #ADD_EDGE} or {@link #REMOVE_EDGE}
   * @param source the new account's id, or the transfer's sender
   * @param target the transfer's receiver; empty for {@link #ADD_NODE}
   * @param features the new account's standardised features; empty for transfers
   */
  public record Event(double time, String kind, String source, String target, float[] features) {
    /** Copies the features. */
    public Event {
      Objects.requireNonNull(kind, "kind");
      Objects.requireNonNull(source, "source");
      Objects.requireNonNull(target, "target");
      features = features.clone();
    }

    /**
     * Returns the features.
     *
     * @return a copy
     */
    @Override
    public float[] features() {
      return features.clone();
    }
  }

  private final List<Event> events;
  private final List<String> ringAccounts;
  private final List<String> newCustomers;
  private final List<String> cashOutAccounts;

  private PaymentsStream(
      List<Event> events,
      List<String> ringAccounts,
      List<String> newCustomers,
      List<String> cashOutAccounts) {
    this.events = List.copyOf(events);
    this.ringAccounts = List.copyOf(ringAccounts);
    this.newCustomers = List.copyOf(newCustomers);
    this.cashOutAccounts = List.copyOf(cashOutAccounts);
  }

  /**
   * Generates the stream over a network. Cost O(n + events · log events).
   *
   * @param network the base network, not modified; new accounts get the ids that follow its last
   * @param seed the random seed
   * @return the stream, events in time order
   */
  public static PaymentsStream generate(PaymentsNetwork network, long seed) {
    Objects.requireNonNull(network, "network");
    return new Builder(network, new SplittableRandom(seed)).build();
  }

  /**
   * Returns the events in time order (ties keep the order they were made in: an account opens
   * before its first transfer).
   *
   * @return an unmodifiable list
   */
  public List<Event> events() {
    return events;
  }

  /**
   * Returns the ids of the new ring's accounts, in the order they open.
   *
   * @return an unmodifiable list of {@value #RING_MEMBERS} ids
   */
  public List<String> ringAccounts() {
    return ringAccounts;
  }

  /**
   * Returns the ids of the new ordinary customers.
   *
   * @return an unmodifiable list of {@value #NEW_CUSTOMERS} ids
   */
  public List<String> newCustomers() {
    return newCustomers;
  }

  /**
   * Returns the existing ordinary accounts the ring pays out to.
   *
   * @return an unmodifiable list of ids
   */
  public List<String> cashOutAccounts() {
    return cashOutAccounts;
  }

  /** Draws the events; one instance per stream. */
  private static final class Builder {
    private final PaymentsNetwork network;
    private final SplittableRandom random;
    private final int[] roles;
    private final int[][] members = new int[3][];
    private final double[][] cumulative = new double[3][];
    private final Set<Long> ties = new HashSet<>();
    private final List<Event> events = new ArrayList<>();
    private final List<String> ids = new ArrayList<>();
    private final java.util.Map<String, Integer> index = new java.util.HashMap<>();
    private final Set<Long> newTies = new HashSet<>();
    private int nextAccount;

    Builder(PaymentsNetwork network, SplittableRandom random) {
      this.network = network;
      this.random = random;
      this.roles = network.roles();
      this.nextAccount = network.accountCount();
      double[] propensity = network.propensity();
      for (int r = 0; r < 3; r++) {
        int role = r;
        members[r] =
            java.util.stream.IntStream.range(0, roles.length)
                .filter(a -> roles[a] == role)
                .toArray();
        cumulative[r] = new double[members[r].length];
        double sum = 0;
        for (int i = 0; i < members[r].length; i++) {
          sum += propensity[members[r][i]];
          cumulative[r][i] = sum;
        }
      }
      for (int a = 0; a < network.accountCount(); a++) {
        ids.add(network.accountId(a));
        index.put(network.accountId(a), a);
      }
      int[] sources = network.transferSources();
      int[] targets = network.transferTargets();
      for (int e = 0; e < sources.length; e++) {
        ties.add(tie(sources[e], targets[e]));
      }
    }

    PaymentsStream build() {
      background();
      List<String> customers = newCustomers();
      List<String> cashOut = new ArrayList<>();
      List<String> ring = ring(cashOut);
      recalls();
      List<Event> sorted = new ArrayList<>(events);
      // Stable: an account's opening is made before its transfers and never later in time.
      sorted.sort(Comparator.comparingDouble(Event::time));
      return new PaymentsStream(sorted, ring, customers, cashOut);
    }

    private void background() {
      double senderShare = 0.400 + 0.450;
      for (int t = 0; t < BACKGROUND_TRANSFERS; t++) {
        int sender = pick(PaymentsNetworkGenerator.ORDINARY);
        int receiver =
            pick(
                random.nextDouble() * senderShare < 0.400
                    ? PaymentsNetworkGenerator.ORDINARY
                    : PaymentsNetworkGenerator.MERCHANT);
        if (sender == receiver) {
          continue;
        }
        transfer(random.nextDouble() * DURATION_SECONDS, sender, receiver);
      }
    }

    private List<String> newCustomers() {
      List<String> made = new ArrayList<>();
      for (int c = 0; c < NEW_CUSTOMERS; c++) {
        double opens = random.nextDouble() * (DURATION_SECONDS - 600);
        int account = open(opens, PaymentsNetworkGenerator.ORDINARY);
        made.add(ids.get(account));
        for (int t = 0; t < TRANSFERS_PER_NEW_CUSTOMER; t++) {
          int receiver =
              pick(
                  random.nextBoolean()
                      ? PaymentsNetworkGenerator.MERCHANT
                      : PaymentsNetworkGenerator.ORDINARY);
          transfer(
              opens + 60 + random.nextDouble() * (DURATION_SECONDS - opens - 60),
              account,
              receiver);
        }
      }
      return made;
    }

    private List<String> ring(List<String> cashOutIds) {
      int[] cashOut = new int[CASH_OUT_ACCOUNTS];
      for (int c = 0; c < CASH_OUT_ACCOUNTS; c++) {
        cashOut[c] = pick(PaymentsNetworkGenerator.ORDINARY);
        cashOutIds.add(ids.get(cashOut[c]));
      }
      int[] ring = new int[RING_MEMBERS];
      double[] opened = new double[RING_MEMBERS];
      List<String> ringIds = new ArrayList<>();
      for (int m = 0; m < RING_MEMBERS; m++) {
        opened[m] = RING_OPENS_AT + m * RING_OPENING_GAP;
        ring[m] = open(opened[m], PaymentsNetworkGenerator.MULE);
        ringIds.add(ids.get(ring[m]));
      }
      for (int m = 0; m < RING_MEMBERS; m++) {
        Set<Integer> victims = new HashSet<>();
        while (victims.size() < VICTIMS_PER_MULE) {
          victims.add(pick(PaymentsNetworkGenerator.ORDINARY));
        }
        List<Integer> ordered = new ArrayList<>(victims);
        Collections.sort(ordered); // a HashSet's order is not part of the seed's contract
        for (int victim : ordered) {
          transfer(after(opened[m] + 60), victim, ring[m]);
        }
        int next = (m + 1) % RING_MEMBERS;
        for (int f = 0; f < FORWARDS_PER_MULE; f++) {
          transfer(after(Math.max(opened[m], opened[next]) + 120), ring[m], ring[next]);
        }
        for (int f = 0; f < RING_MATE_TRANSFERS; f++) {
          int mate = random.nextInt(RING_MEMBERS - 1);
          mate = mate >= m ? mate + 1 : mate;
          transfer(after(Math.max(opened[m], opened[mate]) + 120), ring[m], ring[mate]);
        }
        for (int c = 0; c < CASH_OUT_TRANSFERS; c++) {
          transfer(after(opened[m] + 300), ring[m], cashOut[(m + c) % CASH_OUT_ACCOUNTS]);
        }
      }
      return ringIds;
    }

    /** Recalls a few background transfers that made a new tie, minutes after they were made. */
    private void recalls() {
      List<Event> candidates = new ArrayList<>();
      Set<Long> seen = new HashSet<>();
      Set<Long> repeated = new HashSet<>();
      for (Event e : events) {
        if (!e.kind().equals(ADD_EDGE)) {
          continue;
        }
        long key = tie(index.get(e.source()), index.get(e.target()));
        if (!seen.add(key)) {
          repeated.add(key);
        }
      }
      for (Event e : events) {
        if (!e.kind().equals(ADD_EDGE)) {
          continue;
        }
        long key = tie(index.get(e.source()), index.get(e.target()));
        if (!repeated.contains(key)
            && newTies.contains(key)
            && e.time() < DURATION_SECONDS - 600
            && index.get(e.source()) < network.accountCount()
            && index.get(e.target()) < network.accountCount()) {
          candidates.add(e);
        }
      }
      for (int r = 0; r < RECALLED_TRANSFERS && !candidates.isEmpty(); r++) {
        Event e = candidates.remove(random.nextInt(candidates.size()));
        events.add(
            new Event(
                e.time() + 60 + random.nextDouble() * 240,
                REMOVE_EDGE,
                e.source(),
                e.target(),
                new float[0]));
      }
    }

    private double after(double from) {
      return Math.min(
          DURATION_SECONDS - 1e-3, from + random.nextDouble() * (DURATION_SECONDS - from));
    }

    private int open(double time, int role) {
      double[] raw = new double[PaymentsNetworkGenerator.FEATURE_NAMES.size()];
      PaymentsNetworkGenerator.drawRawFeatures(role, random, raw, 0);
      int account = nextAccount++;
      ids.add(String.format("acct-%06d", account));
      index.put(ids.get(account), account);
      events.add(
          new Event(time, ADD_NODE, ids.get(account), "", network.standardisation().apply(raw)));
      return account;
    }

    private void transfer(double time, int sender, int receiver) {
      long key = tie(sender, receiver);
      if (ties.add(key)) {
        newTies.add(key);
      }
      events.add(new Event(time, ADD_EDGE, ids.get(sender), ids.get(receiver), new float[0]));
    }

    private int pick(int role) {
      double[] c = cumulative[role];
      double u = random.nextDouble() * c[c.length - 1];
      int at = Arrays.binarySearch(c, u);
      return members[role][at >= 0 ? Math.min(at + 1, c.length - 1) : -at - 1];
    }

    private static long tie(int a, int b) {
      return ((long) Math.min(a, b) << 32) | Math.max(a, b);
    }
  }
}
