package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.TreeMap;
import java.util.TreeSet;
import java.util.stream.Stream;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * Seeded random batches, each checked against a plain reference model (a {@code TreeMap} of {@code
 * TreeSet} rows, replayed operation by operation) after every batch: the snapshot's rows, features,
 * ids, counts and change report, the refusal of bad batches with nothing applied, the {@link
 * CsrGraphBuilder} graph of the same edge list, and old snapshots across compactions.
 */
class VersionedGraphReferenceTest {

  private static final int FEATURES = 3;
  private static final int BATCHES = 300;

  static Stream<Arguments> policies() {
    List<Arguments> all = new ArrayList<>();
    for (SelfLoopPolicy selfLoops : SelfLoopPolicy.values()) {
      for (DirectionPolicy direction : DirectionPolicy.values()) {
        for (DuplicatePolicy duplicates : DuplicatePolicy.values()) {
          all.add(Arguments.of(selfLoops, direction, duplicates));
        }
      }
    }
    return all.stream();
  }

  /** A graph with the given policies; background compaction after almost every batch if asked. */
  private static VersionedGraph<String> graph(
      SelfLoopPolicy selfLoops,
      DirectionPolicy direction,
      DuplicatePolicy duplicates,
      boolean compactInBackground) {
    return VersionedGraph.builder(FEATURES)
        .selfLoops(selfLoops)
        .direction(direction)
        .duplicates(duplicates)
        .backgroundCompaction(compactInBackground)
        .compactionThreshold(0.01, 0)
        .build();
  }

  @ParameterizedTest
  @MethodSource("policies")
  void randomBatchesMatchTheReference(
      SelfLoopPolicy selfLoops, DirectionPolicy direction, DuplicatePolicy duplicates) {
    long seed = 31L * selfLoops.ordinal() + 7L * direction.ordinal() + duplicates.ordinal();
    try (VersionedGraph<String> graph = graph(selfLoops, direction, duplicates, false)) {
      run(graph, new SplittableRandom(seed), true);
    }
  }

  /** The same with a compaction thread folding deltas in after almost every batch. */
  @ParameterizedTest
  @MethodSource("policies")
  void randomBatchesMatchWhileCompactingInTheBackground(
      SelfLoopPolicy selfLoops, DirectionPolicy direction, DuplicatePolicy duplicates) {
    long seed = 1000 + 31L * selfLoops.ordinal() + 7L * direction.ordinal() + duplicates.ordinal();
    try (VersionedGraph<String> graph = graph(selfLoops, direction, duplicates, true)) {
      graph.finishUnderLockAt(0); // always catch up without the lock first
      run(graph, new SplittableRandom(seed), false);
    }
  }

  /**
   * Two hub nodes take most edges, so that their rows outgrow the flat delta form and are kept in
   * chunks: added to, removed from, read, compacted and rebuilt, against the reference.
   */
  @ParameterizedTest
  @MethodSource("policies")
  void hubRowsMatchTheReference(
      SelfLoopPolicy selfLoops, DirectionPolicy direction, DuplicatePolicy duplicates) {
    SplittableRandom random =
        new SplittableRandom(2000 + 31L * selfLoops.ordinal() + 7L * direction.ordinal());
    try (VersionedGraph<String> graph = graph(selfLoops, direction, duplicates, false)) {
      Reference ref = withNodes(graph, 2000, random);
      int chunked = 0;
      LiveSnapshot<String> kept = null;
      Reference keptRef = null;
      for (int b = 0; b < 120; b++) {
        Reference next = ref.next();
        UpdateBatch<String> batch = graph.newBatch();
        for (int op = 0; op < 30; op++) {
          int dice = random.nextInt(10);
          String hub = next.ids.get(random.nextInt(2));
          String source = next.randomId(random);
          if (dice < 7) {
            while (next.has(source, hub) || source.equals(hub)) {
              source = next.randomId(random);
            }
            batch.addEdge(source, hub);
            assertTrue(next.addEdge(source, hub));
          } else if (dice < 9) {
            String[] edge = next.randomEdgeInto(random, next.index.get(hub));
            if (edge != null) {
              batch.removeEdge(edge[0], edge[1]);
              assertTrue(next.removeEdge(edge[0], edge[1]));
            }
          } else {
            String target = next.randomId(random);
            if (!next.has(source, target) && !source.equals(target)) {
              batch.addEdge(source, target);
              assertTrue(next.addEdge(source, target));
            }
          }
        }
        BatchResult result = graph.apply(batch);
        assertArrayEquals(ref.changedRows(next), result.changedRows());
        ref = next;
        assertMatches(ref, graph.snapshot());
        if (graph.snapshot().rowDeltas.get(0) instanceof RowDeltas.Chunked) {
          chunked++;
        }
        if (b == 40) {
          kept = graph.snapshot();
          keptRef = ref.copy();
        }
        if (b == 80) {
          assertMatches(ref, graph.compact());
          assertEquals(ref.built(), graph.snapshot().toIndexedGraph().graph());
        }
      }
      assertEquals(ref.built(), graph.snapshot().toIndexedGraph().graph());
      assertMatches(keptRef, kept);
      assertTrue(chunked > 20, "batches that left the hub's delta chunked: " + chunked);
    }
  }

  /**
   * A batch staged before the write lock while another writer's batch lands first (on the same
   * rows): it must apply as if it came after that batch, or be refused naming the operation that no
   * longer applies.
   */
  @ParameterizedTest
  @MethodSource("policies")
  void batchesStagedAheadApplyAfterTheBatchThatOvertookThem(
      SelfLoopPolicy selfLoops, DirectionPolicy direction, DuplicatePolicy duplicates) {
    SplittableRandom random =
        new SplittableRandom(3000 + 31L * selfLoops.ordinal() + 7L * direction.ordinal());
    try (VersionedGraph<String> graph = graph(selfLoops, direction, duplicates, false)) {
      Reference ref = withNodes(graph, 40, random);
      int overtaken = 0;
      for (int round = 0; round < 300; round++) {
        // the batch that overtakes: valid by construction, replayed on the reference first
        Reference afterOther = ref.next();
        UpdateBatch<String> other = graph.newBatch();
        int otherFails = fill(other, afterOther, random, 1 + random.nextInt(12));
        Reference afterOtherOk = otherFails < 0 ? afterOther : ref;
        Reference afterBoth = afterOtherOk.next();
        UpdateBatch<String> batch = graph.newBatch();
        int fails = fill(batch, afterBoth, random, 1 + random.nextInt(12));
        boolean compactBetween = round % 10 == 3; // the batch was staged on the old base
        Runnable overtake =
            () -> {
              if (otherFails < 0) {
                graph.apply(other);
              } else {
                assertThrows(RejectedUpdateException.class, () -> graph.apply(other));
              }
              if (compactBetween) {
                graph.compact();
              }
            };
        if (fails >= 0) {
          RejectedUpdateException e =
              assertThrows(RejectedUpdateException.class, () -> graph.apply(batch, overtake));
          assertEquals(fails, e.operation(), e.getMessage());
          ref = afterOtherOk;
        } else {
          BatchResult result = graph.apply(batch, overtake);
          assertArrayEquals(afterOtherOk.changedRows(afterBoth), result.changedRows());
          ref = afterBoth;
          overtaken++;
        }
        assertMatches(ref, graph.snapshot());
      }
      assertTrue(overtaken > 100, "applied after being overtaken: " + overtaken);
      assertEquals(ref.built(), graph.snapshot().toIndexedGraph().graph());
    }
  }

  /** Adds {@code n} nodes with random features in one batch; returns the matching reference. */
  private static Reference withNodes(VersionedGraph<String> graph, int n, SplittableRandom random) {
    Reference ref = new Reference(graph);
    UpdateBatch<String> nodes = graph.newBatch();
    for (int i = 0; i < n; i++) {
      String id = ref.newId();
      float[] row = ref.randomFeatures(random);
      nodes.addNode(id, row);
      assertTrue(ref.addNode(id, row));
    }
    graph.apply(nodes);
    return ref.next();
  }

  private static void run(
      VersionedGraph<String> graph, SplittableRandom random, boolean compactHere) {
    Reference ref = new Reference(graph);
    List<LiveSnapshot<String>> keptSnapshots = new ArrayList<>();
    List<Reference> keptReferences = new ArrayList<>();
    int applied = 0;
    int refused = 0;
    for (int b = 0; b < BATCHES; b++) {
      Reference next = ref.next();
      UpdateBatch<String> batch = graph.newBatch();
      int failAt = fill(batch, next, random, 1 + random.nextInt(b < 20 ? 40 : 12));
      LiveSnapshot<String> before = graph.snapshot();
      if (failAt >= 0) {
        RejectedUpdateException e =
            assertThrows(RejectedUpdateException.class, () -> graph.apply(batch));
        assertEquals(failAt, e.operation(), e.getMessage());
        assertTrue(e.getMessage().startsWith("batch refused, nothing applied"), e.getMessage());
        assertEquals(before.version(), graph.snapshot().version());
        assertMatches(ref, graph.snapshot());
        refused++;
      } else {
        BatchResult result = graph.apply(batch);
        assertEquals(before.version() + 1, result.version());
        assertArrayEquals(ref.changedRows(next), result.changedRows(), "changed rows, batch " + b);
        assertArrayEquals(
            ref.changedFeatures(next), result.changedFeatures(), "changed features, batch " + b);
        ref = next;
        assertMatches(ref, graph.snapshot());
        applied++;
      }
      if (b % 10 == 0) {
        assertEquals(ref.built(), graph.snapshot().toIndexedGraph().graph(), "batch " + b);
      }
      if (b % 40 == 5) {
        keptSnapshots.add(graph.snapshot());
        keptReferences.add(ref.copy());
      }
      if (compactHere && b % 25 == 24) {
        LiveSnapshot<String> compacted = graph.compact();
        assertEquals(ref.version, compacted.version());
        assertTrue(compacted.isCompact());
        assertEquals(0, compacted.memory().deltaBytes());
        CsrGraph built = ref.built();
        assertEquals(built, compacted.toIndexedGraph().graph());
        assertTrue(compacted.memory().graphBytes() <= built.storageBytes());
        assertMatches(ref, compacted);
        for (int k = 0; k < keptSnapshots.size(); k++) {
          assertMatches(keptReferences.get(k), keptSnapshots.get(k));
        }
      }
    }
    for (int k = 0; k < keptSnapshots.size(); k++) {
      assertMatches(keptReferences.get(k), keptSnapshots.get(k));
    }
    assertTrue(applied > BATCHES / 3, "applied " + applied);
    assertTrue(refused > 10, "refused " + refused);
  }

  /**
   * Records random operations into {@code batch} while replaying them on {@code ref}; returns the
   * index of the first operation that must refuse the batch (then a few more are recorded after it,
   * which must not apply either), or -1.
   */
  private static int fill(
      UpdateBatch<String> batch, Reference ref, SplittableRandom random, int n) {
    for (int op = 0; op < n; op++) {
      int dice = random.nextInt(100);
      boolean valid;
      if (dice < 12 || ref.size() < 2) {
        String id = random.nextInt(60) == 0 && ref.size() > 0 ? ref.randomId(random) : ref.newId();
        float[] row = random.nextBoolean() ? ref.randomFeatures(random) : null;
        if (row == null) {
          batch.addNode(id);
        } else {
          batch.addNode(id, row);
        }
        valid = ref.addNode(id, row);
      } else if (dice < 62) {
        String source = ref.randomIdOrGhost(random);
        String target = random.nextInt(8) == 0 ? source : ref.randomIdOrGhost(random);
        // mostly new edges, so that fewer batches are refused
        for (int retry = random.nextInt(5) == 0 ? 0 : 10;
            retry > 0 && ref.has(source, target);
            retry--) {
          source = ref.randomId(random);
        }
        batch.addEdge(source, target);
        valid = ref.addEdge(source, target);
      } else if (dice < 85) {
        String[] edge = random.nextInt(10) == 0 ? null : ref.randomEdge(random);
        if (edge == null) {
          edge = new String[] {ref.randomIdOrGhost(random), ref.randomIdOrGhost(random)};
        }
        batch.removeEdge(edge[0], edge[1]);
        valid = ref.removeEdge(edge[0], edge[1]);
      } else {
        String id = ref.randomIdOrGhost(random);
        float[] row =
            random.nextInt(4) == 0 && ref.features(id) != null
                ? ref.features(id).clone() // the same values: no change
                : ref.randomFeatures(random);
        batch.setFeatures(id, row);
        valid = ref.setFeatures(id, row);
      }
      if (!valid) {
        for (int k = random.nextInt(3); k > 0; k--) {
          batch.addNode("never-" + random.nextLong());
        }
        return op;
      }
    }
    return -1;
  }

  private static void assertMatches(Reference ref, LiveSnapshot<String> snapshot) {
    assertEquals(ref.version, snapshot.version());
    int n = ref.size();
    assertEquals(n, snapshot.nodeCount());
    assertEquals(n, snapshot.nodes().size());
    assertEquals(ref.edgeCount(), snapshot.edgeCount());
    assertEquals(ref.missingFeatures(), snapshot.missingFeatureCount());
    int[] into = new int[n + 2];
    float[] features = new float[FEATURES + 1];
    for (int i = 0; i < n; i++) {
      assertEquals(ref.ids.get(i), snapshot.nodes().idOf(i));
      assertEquals(i, snapshot.nodes().indexOf(ref.ids.get(i)));
      TreeSet<Integer> row = ref.rows.get(i);
      int[] expected = row.stream().mapToInt(Integer::intValue).toArray();
      assertEquals(expected.length, snapshot.degree(i), "degree of " + i);
      Arrays.fill(into, -9);
      assertEquals(expected.length, snapshot.copyRow(i, into, 1));
      assertArrayEquals(expected, Arrays.copyOfRange(into, 1, 1 + expected.length), "row " + i);
      assertEquals(-9, into[1 + expected.length]);
      for (int j : expected) {
        assertTrue(snapshot.hasEdge(j, i));
      }
      int absent = (i * 7 + 3) % n;
      assertEquals(row.contains(absent), snapshot.hasEdge(absent, i));
      float[] values = ref.features.get(i);
      assertEquals(values != null, snapshot.hasFeatures(i));
      if (values != null) {
        snapshot.copyRow(i, features, 1);
        assertArrayEquals(values, Arrays.copyOfRange(features, 1, 1 + FEATURES));
      } else {
        int node = i;
        assertThrows(MissingFeaturesException.class, () -> snapshot.copyRow(node, features, 0));
      }
    }
    assertEquals(-1, snapshot.nodes().indexOf("never-seen"));
  }

  /** The reference model: rows as sorted sets, features, ids, and the edges as given. */
  private static final class Reference {
    final boolean addSelfLoops;
    final boolean symmetrise;
    final boolean rejectDuplicates;
    final SelfLoopPolicy selfLoopPolicy;
    final DirectionPolicy directionPolicy;
    final DuplicatePolicy duplicatePolicy;
    long version;
    int nextId;
    final List<String> ids;
    final Map<String, Integer> index;
    final TreeMap<Integer, TreeSet<Integer>> rows;
    final List<float[]> features;
    final List<int[]> given; // each added edge as given, in order; removals delete them

    Reference(VersionedGraph<?> graph) {
      selfLoopPolicy = graph.selfLoops();
      directionPolicy = graph.direction();
      duplicatePolicy = graph.duplicates();
      addSelfLoops = selfLoopPolicy == SelfLoopPolicy.ADD;
      symmetrise = directionPolicy == DirectionPolicy.SYMMETRISE;
      rejectDuplicates = duplicatePolicy == DuplicatePolicy.REJECT;
      ids = new ArrayList<>();
      index = new HashMap<>();
      rows = new TreeMap<>();
      features = new ArrayList<>();
      given = new ArrayList<>();
    }

    private Reference(Reference other, long version) {
      selfLoopPolicy = other.selfLoopPolicy;
      directionPolicy = other.directionPolicy;
      duplicatePolicy = other.duplicatePolicy;
      addSelfLoops = other.addSelfLoops;
      symmetrise = other.symmetrise;
      rejectDuplicates = other.rejectDuplicates;
      this.version = version;
      nextId = other.nextId;
      ids = new ArrayList<>(other.ids);
      index = new HashMap<>(other.index);
      rows = new TreeMap<>();
      other.rows.forEach((target, row) -> rows.put(target, new TreeSet<>(row)));
      features = new ArrayList<>(other.features);
      given = new ArrayList<>(other.given);
    }

    /** A copy for the next version (the batch's replay); the caller drops it if refused. */
    Reference next() {
      return new Reference(this, version + 1);
    }

    /** A copy of this version, kept beside an old snapshot. */
    Reference copy() {
      return new Reference(this, version);
    }

    int size() {
      return ids.size();
    }

    long edgeCount() {
      return rows.values().stream().mapToLong(TreeSet::size).sum();
    }

    int missingFeatures() {
      return (int) features.stream().filter(f -> f == null).count();
    }

    float[] features(String id) {
      Integer i = index.get(id);
      return i == null ? null : features.get(i);
    }

    boolean has(String sourceId, String targetId) {
      Integer s = index.get(sourceId);
      Integer t = index.get(targetId);
      return s != null && t != null && rows.get(t).contains(s);
    }

    String newId() {
      return "n" + nextId++;
    }

    String randomId(SplittableRandom random) {
      return ids.get(random.nextInt(ids.size()));
    }

    String randomIdOrGhost(SplittableRandom random) {
      return random.nextInt(80) == 0 ? "ghost-" + random.nextInt(5) : randomId(random);
    }

    /** A random edge into {@code target} that is not the policy's self-loop, or null. */
    String[] randomEdgeInto(SplittableRandom random, int target) {
      Integer[] sources = rows.get(target).toArray(new Integer[0]);
      for (int attempt = 0; attempt < 10 && sources.length > 0; attempt++) {
        int source = sources[random.nextInt(sources.length)];
        if (source != target || !addSelfLoops) {
          return new String[] {ids.get(source), ids.get(target)};
        }
      }
      return null;
    }

    String[] randomEdge(SplittableRandom random) {
      for (int attempt = 0; attempt < 10; attempt++) {
        int target = random.nextInt(ids.size());
        TreeSet<Integer> row = rows.get(target);
        if (!row.isEmpty()) {
          Integer[] sources = row.toArray(new Integer[0]);
          int source = sources[random.nextInt(sources.length)];
          if (source == target && addSelfLoops && random.nextInt(4) != 0) {
            continue; // mostly not the policy's self-loop, which cannot be removed
          }
          return new String[] {ids.get(source), ids.get(target)};
        }
      }
      return null;
    }

    float[] randomFeatures(SplittableRandom random) {
      float[] row = new float[FEATURES];
      for (int k = 0; k < FEATURES; k++) {
        row[k] = (float) random.nextDouble(-2, 2);
      }
      return row;
    }

    boolean addNode(String id, float[] row) {
      if (index.containsKey(id)) {
        return false;
      }
      int i = ids.size();
      ids.add(id);
      index.put(id, i);
      rows.put(i, new TreeSet<>());
      if (addSelfLoops) {
        rows.get(i).add(i);
      }
      features.add(row);
      return true;
    }

    boolean addEdge(String sourceId, String targetId) {
      Integer s = index.get(sourceId);
      Integer t = index.get(targetId);
      if (s == null || t == null) {
        return false;
      }
      if (s.equals(t) && addSelfLoops) {
        return true;
      }
      if (rows.get(t).contains(s)) {
        if (rejectDuplicates) {
          return false;
        }
      } else {
        rows.get(t).add(s);
        if (symmetrise) {
          rows.get(s).add(t);
        }
      }
      given.add(new int[] {s, t});
      return true;
    }

    boolean removeEdge(String sourceId, String targetId) {
      Integer s = index.get(sourceId);
      Integer t = index.get(targetId);
      if (s == null || t == null || (s.equals(t) && addSelfLoops) || !rows.get(t).contains(s)) {
        return false;
      }
      rows.get(t).remove(s);
      if (symmetrise) {
        rows.get(s).remove(t);
      }
      given.removeIf(e -> (e[0] == s && e[1] == t) || (symmetrise && e[0] == t && e[1] == s));
      return true;
    }

    boolean setFeatures(String id, float[] row) {
      Integer i = index.get(id);
      if (i == null) {
        return false;
      }
      features.set(i, row);
      return true;
    }

    int[] changedRows(Reference next) {
      List<Integer> changed = new ArrayList<>();
      for (int i = 0; i < next.size(); i++) {
        if (i >= size() || !rows.get(i).equals(next.rows.get(i))) {
          changed.add(i);
        }
      }
      return changed.stream().mapToInt(Integer::intValue).toArray();
    }

    int[] changedFeatures(Reference next) {
      List<Integer> changed = new ArrayList<>();
      for (int i = 0; i < next.size(); i++) {
        float[] old = i < size() ? features.get(i) : null;
        if (next.features.get(i) != null && !Arrays.equals(old, next.features.get(i))) {
          changed.add(i);
        }
      }
      return changed.stream().mapToInt(Integer::intValue).toArray();
    }

    /** The graph the batch builder makes from the edges as given, with the same policies. */
    CsrGraph built() {
      int[] sources = given.stream().mapToInt(e -> e[0]).toArray();
      int[] targets = given.stream().mapToInt(e -> e[1]).toArray();
      try {
        return CsrGraphBuilder.fromEdges(sources, targets, size())
            .selfLoops(selfLoopPolicy)
            .direction(directionPolicy)
            .duplicates(duplicatePolicy)
            .build();
      } catch (IllegalArgumentException e) {
        fail("the builder refused the live graph's edge list: " + e.getMessage());
        return null;
      }
    }
  }
}
