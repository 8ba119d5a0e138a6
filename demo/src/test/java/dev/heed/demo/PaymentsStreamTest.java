package dev.heed.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.HashMap;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The demo stream on a small network: deterministic, in time order, every event valid where it
 * stands (ids known, recalled ties present), the ring shaped as documented, and new accounts'
 * features standardised with the base network's column means and deviations.
 */
class PaymentsStreamTest {

  private static final long SEED = 31L;

  private static PaymentsNetwork network;
  private static PaymentsStream stream;

  @BeforeAll
  static void generate() {
    network = PaymentsNetworkGenerator.of(2000, 16_000, SEED).generate();
    stream = PaymentsStream.generate(network, PaymentsStream.DEFAULT_SEED);
  }

  @Test
  void sameSeedSameEvents() {
    PaymentsStream again = PaymentsStream.generate(network, PaymentsStream.DEFAULT_SEED);
    assertEquals(stream.events().size(), again.events().size());
    for (int i = 0; i < stream.events().size(); i++) {
      PaymentsStream.Event a = stream.events().get(i);
      PaymentsStream.Event b = again.events().get(i);
      assertEquals(a.time(), b.time());
      assertEquals(a.kind() + a.source() + a.target(), b.kind() + b.source() + b.target());
      assertEquals(
          java.util.Arrays.toString(a.features()), java.util.Arrays.toString(b.features()));
    }
    PaymentsStream other = PaymentsStream.generate(network, PaymentsStream.DEFAULT_SEED + 1);
    assertFalse(
        other.events().get(0).source().equals(stream.events().get(0).source())
            && other.events().get(1).source().equals(stream.events().get(1).source()),
        "another seed gives other events");
  }

  @Test
  void everyEventIsValidWhereItStands() {
    Set<String> known = new HashSet<>();
    for (int a = 0; a < network.accountCount(); a++) {
      known.add(network.accountId(a));
    }
    Set<String> ties = new HashSet<>();
    int[] s = network.transferSources();
    int[] t = network.transferTargets();
    for (int e = 0; e < s.length; e++) {
      ties.add(tie(network.accountId(s[e]), network.accountId(t[e])));
    }
    double last = 0;
    int removals = 0;
    for (PaymentsStream.Event e : stream.events()) {
      assertTrue(e.time() >= last && e.time() < PaymentsStream.DURATION_SECONDS, e.toString());
      last = e.time();
      switch (e.kind()) {
        case PaymentsStream.ADD_NODE -> {
          assertTrue(known.add(e.source()), "opened once: " + e.source());
          assertEquals(PaymentsNetworkGenerator.FEATURE_NAMES.size(), e.features().length);
        }
        case PaymentsStream.ADD_EDGE -> {
          assertTrue(known.contains(e.source()) && known.contains(e.target()), e.toString());
          assertFalse(e.source().equals(e.target()));
          ties.add(tie(e.source(), e.target()));
        }
        case PaymentsStream.REMOVE_EDGE -> {
          assertTrue(ties.remove(tie(e.source(), e.target())), "recalled tie present: " + e);
          removals++;
        }
        default -> throw new AssertionError("unknown kind " + e.kind());
      }
    }
    assertEquals(PaymentsStream.RECALLED_TRANSFERS, removals);
  }

  @Test
  void ringReceivesFromVictimsPassesMoneyAroundAndCashesOut() {
    List<String> ring = stream.ringAccounts();
    assertEquals(PaymentsStream.RING_MEMBERS, ring.size());
    Map<String, Set<String>> payers = new HashMap<>();
    Map<String, Set<String>> ringMates = new HashMap<>();
    Map<String, Set<String>> cashOut = new HashMap<>();
    for (PaymentsStream.Event e : stream.events()) {
      if (!e.kind().equals(PaymentsStream.ADD_EDGE)) {
        continue;
      }
      boolean fromRing = ring.contains(e.source());
      boolean toRing = ring.contains(e.target());
      if (toRing && !fromRing) {
        payers.computeIfAbsent(e.target(), k -> new HashSet<>()).add(e.source());
      } else if (toRing) {
        ringMates.computeIfAbsent(e.source(), k -> new HashSet<>()).add(e.target());
      } else if (fromRing) {
        cashOut.computeIfAbsent(e.source(), k -> new HashSet<>()).add(e.target());
      }
    }
    int ordinary = PaymentsNetwork.ROLES.indexOf("ordinary");
    int[] roles = network.roles();
    Map<String, Integer> index = new HashMap<>();
    for (int a = 0; a < network.accountCount(); a++) {
      index.put(network.accountId(a), a);
    }
    for (int m = 0; m < ring.size(); m++) {
      String member = ring.get(m);
      assertEquals(PaymentsStream.VICTIMS_PER_MULE, payers.get(member).size(), member);
      for (String victim : payers.get(member)) {
        assertEquals(ordinary, roles[index.get(victim)], "victims are ordinary accounts");
      }
      assertTrue(ringMates.get(member).contains(ring.get((m + 1) % ring.size())), member);
      assertTrue(stream.cashOutAccounts().containsAll(cashOut.get(member)), member);
    }
  }

  /**
   * The generator draws raw features per role and standardises each column with its mean and
   * deviation over the base network; undoing that with the same figures gives back the raw
   * quantities' shapes: an age of at least 0.05 years, a whole number of devices (at least 1), a
   * business registration of 0 or 1, a night share in [0, 1].
   */
  @Test
  void newAccountsFeaturesAreTheGeneratorsStandardisedDraws() {
    PaymentsNetwork.Standardisation z = network.standardisation();
    int opened = 0;
    for (PaymentsStream.Event e : stream.events()) {
      if (!e.kind().equals(PaymentsStream.ADD_NODE)) {
        continue;
      }
      opened++;
      float[] x = e.features();
      double[] raw = new double[x.length];
      for (int c = 0; c < x.length; c++) {
        raw[c] = x[c] * z.scales()[c] + z.means()[c];
      }
      assertTrue(raw[0] >= 0.05 - 1e-4, "age " + raw[0]);
      assertTrue(raw[2] >= -1e-4 && raw[2] <= 1 + 1e-4, "night share " + raw[2]);
      assertTrue(raw[4] >= 1 - 1e-4 && Math.abs(raw[4] - Math.rint(raw[4])) < 1e-4, "devices");
      assertTrue(Math.abs(raw[5]) < 1e-4 || Math.abs(raw[5] - 1) < 1e-4, "registration");
    }
    assertEquals(PaymentsStream.RING_MEMBERS + PaymentsStream.NEW_CUSTOMERS, opened);
  }

  private static String tie(String a, String b) {
    return a.compareTo(b) < 0 ? a + " " + b : b + " " + a;
  }
}
