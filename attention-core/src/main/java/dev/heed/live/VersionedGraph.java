package dev.heed.live;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.NodeIndex;
import dev.heed.graph.SavedGraph;
import dev.heed.graph.SavedGraphFile;
import dev.heed.graph.SelfLoopPolicy;
import java.util.List;
import java.util.Objects;
import java.util.concurrent.CopyOnWriteArrayList;
import java.util.concurrent.locks.ReentrantLock;
import java.util.function.Consumer;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * A graph with node features that changes while it is being read: nodes, edges and features are
 * added and changed in {@link UpdateBatch batches} from any thread, and readers take {@link
 * LiveSnapshot snapshots}, each an immutable view of one version that implements {@link
 * dev.heed.graph.NeighbourRows} and {@link dev.heed.classify.FeatureRows}.
 *
 * <pre>{@code
 * VersionedGraph<String> graph =
 *     VersionedGraph.builder(16) // 16 features per node
 *         .direction(DirectionPolicy.SYMMETRISE)
 *         .build();
 * graph.apply(graph.newBatch().addNode("a", fa).addNode("b", fb).addEdge("a", "b"));
 * LiveSnapshot<String> now = graph.snapshot(); // O(1), never blocks
 * int b = now.nodes().indexOf("b");
 * int[] row = new int[now.degree(b)];
 * now.copyRow(b, row, 0); // {a, b}: b attends to a, and to itself (SelfLoopPolicy.ADD)
 * }</pre>
 *
 * <p><b>Conventions</b> are those of the batch builders ({@link CsrGraphBuilder}), applied to the
 * edges added so far and not removed: a snapshot's rows equal the {@link CsrGraph} that {@code
 * CsrGraphBuilder.fromEdges(...)} builds from those edges with the same policies. Rows are targets:
 * an edge {@code j -> i} puts {@code j} in the row of {@code i} ({@code i} attends to {@code j}).
 * {@link DirectionPolicy#SYMMETRISE}: adding or removing {@code a -> b} adds or removes {@code b ->
 * a} too. {@link SelfLoopPolicy#ADD}: each new node gets its self-loop, adding one changes nothing
 * (whatever the duplicate policy; the batch builders refuse a self-loop given twice under {@code
 * REJECT}) and removing one refuses the batch; {@code AS_GIVEN}: self-loops are ordinary edges.
 * {@link DuplicatePolicy#MERGE}: adding a present edge changes nothing; {@code REJECT}: it refuses
 * the batch. Removing an edge that is not present always refuses the batch (never a silent no-op).
 * Nodes are added by the caller's ids ({@code K}, compared with {@code equals}; they must not
 * change), get indices {@code 0, 1, 2, ...} in the order added, and are never removed, so an index
 * keeps its meaning across versions. Features have a fixed width f; a node needs them before it can
 * be scored: {@link LiveSnapshot#hasFeatures(int)} and {@link LiveSnapshot#missingFeatureCount()}
 * tell, and reading a missing row throws {@link MissingFeaturesException}.
 *
 * <p><b>Updates.</b> {@link #apply} runs a batch's operations in order and publishes the result as
 * one new version, or refuses the whole batch with a {@link RejectedUpdateException} (naming the
 * operation) and changes nothing. It reports which nodes' rows or features changed ({@link
 * BatchResult}). Writers are serialised by one lock; ids already known are looked up before taking
 * it, so several writer threads overlap that part. Cost per batch: O(k log d) for k operations on
 * rows with d pending changes, plus path copying in the delta trie (about one 152-byte trie node
 * per changed row for scattered rows, fewer when rows are close).
 *
 * <p><b>Reads</b> never block: {@link #snapshot()} reads one volatile reference. Each version keeps
 * a base CSR graph and, per row changed since, a small sorted delta (sources added and removed) in
 * a persistent trie that later versions share by path copying, like the multiversioned CSR with
 * delta levels of LLAMA (Macko, Marathe, Margo, Seltzer, ICDE 2015) and the cheap snapshots of
 * purely functional trees in Aspen (Dhulipala, Blelloch, Shun, PLDI 2019).
 *
 * <p><b>Compaction</b> folds the deltas into a new base CSR and feature matrix ({@link
 * #compact()}), O(n·f + n + E), while readers and writers continue: it builds the new base from one
 * version without any lock, then carries over the rows that writers changed meanwhile, taking the
 * write lock only for the last few. Snapshots taken before stay valid (they keep the old base). By
 * default a daemon thread compacts when the deltas exceed {@value #DEFAULT_COMPACTION_FRACTION} of
 * the base's bytes (and at least {@value #DEFAULT_COMPACTION_MIN_BYTES} bytes); {@link
 * Builder#backgroundCompaction(boolean) switched off}, the caller calls {@link #compact()} itself,
 * for example from a scheduled task.
 *
 * <p><b>Memory</b> (see {@link LiveSnapshot#memory()}): after compaction the rows take exactly the
 * bytes of a {@link CsrGraph} of the same graph, {@code 4·(n+1) + 4·E}; each row changed since
 * costs {@code 16 + 4·(1 + changes)} bytes (rounded up to 8) plus its share of 152-byte trie nodes;
 * features cost {@code 4·f} bytes per node plus about {@code 16 + 4·f} per row replaced since. The
 * id map costs 8 to 20 bytes per node plus the ids. While a compaction runs, the old and the new
 * base both exist (and a copy of the new one while it is wrapped), so allow about three times the
 * base's bytes at peak. Measured on an R-MAT graph of 1,048,576 nodes and 17.1 million entries
 * ({@code benchmarks/RESULTS.md}): rows 4.245 bytes per entry after compaction (exactly the CSR's
 * size), 5.70 with every edge in deltas, 4.79 with a further 10 % of edges in deltas.
 *
 * <p>Thread safety: safe for any number of threads; see above for what blocks what.
 *
 * @param <K> the type of the caller's node ids
 */
public final class VersionedGraph<K> implements AutoCloseable {

  /** Default share of the base's bytes the deltas may reach before background compaction. */
  public static final double DEFAULT_COMPACTION_FRACTION = 0.25;

  /** Default delta size in bytes below which background compaction never starts (4 MiB). */
  public static final long DEFAULT_COMPACTION_MIN_BYTES = 4L << 20;

  /** A compaction finishes under the write lock once at most this many changes are pending. */
  static final long FINISH_UNDER_LOCK = 8192;

  /** After this many rounds of catching up without the lock, the next one finishes under it. */
  private static final int MAX_CATCH_UP_ROUNDS = 4;

  private static final Logger LOG = LoggerFactory.getLogger(VersionedGraph.class);

  private final int featureCount;
  private final SelfLoopPolicy selfLoops;
  private final DirectionPolicy direction;
  private final DuplicatePolicy duplicates;
  private final double compactionFraction;
  private final long compactionMinBytes;
  private final ReentrantLock writeLock = new ReentrantLock();
  private final ReentrantLock compactionLock = new ReentrantLock();
  private final NodeIdTable<K> idTable = new NodeIdTable<>(); // guarded by writeLock
  private ChangeLog changeLog; // guarded by writeLock; set while a compaction runs
  private final List<Consumer<BatchResult>> followers = new CopyOnWriteArrayList<>();
  private volatile LiveSnapshot<K> current;
  private volatile boolean closed;
  private volatile long finishUnderLock = FINISH_UNDER_LOCK;
  private final Thread compactor; // null when compaction is left to the caller
  private final Object compactionSignal = new Object();
  private boolean compactionRequested; // guarded by compactionSignal

  private VersionedGraph(Builder builder, SavedGraph<K> saved) {
    this.featureCount = builder.featureCount;
    this.selfLoops = builder.selfLoops;
    this.direction = builder.direction;
    this.duplicates = builder.duplicates;
    this.compactionFraction = builder.compactionFraction;
    this.compactionMinBytes = builder.compactionMinBytes;
    if (saved == null) {
      this.current =
          new LiveSnapshot<>(
              0,
              0,
              0,
              CsrGraph.of(new int[] {0}, new int[0]),
              SlotTrie.EMPTY,
              0,
              0,
              NodeFeatures.ofRowMajor(new float[0], 0, featureCount),
              null,
              SlotTrie.EMPTY,
              0,
              0,
              idTable.view());
    } else {
      CsrGraph rows = saved.graph().graph();
      NodeIndex<K> ids = saved.graph().nodes();
      for (int node = 0; node < rows.nodeCount(); node++) {
        idTable.append(ids.idOf(node));
      }
      this.current =
          new LiveSnapshot<>(
              saved.version() + 1,
              rows.nodeCount(),
              rows.edgeCount(),
              rows,
              SlotTrie.EMPTY,
              0,
              0,
              saved.features(),
              null,
              SlotTrie.EMPTY,
              0,
              0,
              idTable.view());
    }
    if (builder.background) {
      compactor = new Thread(this::compactWhenAsked, "heed-live-graph-compaction");
      compactor.setDaemon(true);
      compactor.start();
    } else {
      compactor = null;
    }
  }

  /**
   * Starts a builder for a live graph whose nodes have {@code featureCount} features each.
   *
   * @param featureCount f, at least 1
   * @return a builder with the batch builders' default policies and background compaction
   * @throws IllegalArgumentException if {@code featureCount} is below 1
   */
  public static Builder builder(int featureCount) {
    if (featureCount < 1) {
      throw new IllegalArgumentException(
          "a live graph needs at least one feature per node, got featureCount = " + featureCount);
    }
    return new Builder(featureCount);
  }

  /**
   * Starts an empty batch of updates for this graph. O(1).
   *
   * @return a new batch, to be filled by one thread and passed to {@link #apply}
   */
  public UpdateBatch<K> newBatch() {
    return new UpdateBatch<>(this, featureCount);
  }

  /**
   * Applies a batch atomically: readers see all of it (from the returned version on) or none of it.
   * The batch is not modified and may be applied again.
   *
   * @param batch the updates, made by this graph's {@link #newBatch()}
   * @return the new version and the nodes whose rows or features changed
   * @throws RejectedUpdateException if an operation cannot apply (naming it); nothing is applied
   * @throws IllegalStateException if the graph is closed
   * @throws IllegalArgumentException if the batch belongs to another graph
   * @throws NullPointerException if {@code batch} is null
   */
  public BatchResult apply(UpdateBatch<K> batch) {
    return apply(batch, null);
  }

  /**
   * {@link #apply(UpdateBatch)}, running {@code betweenSteps} (when not null) after the batch was
   * staged ahead and before the write lock is taken: lets tests make another writer's batch land in
   * between.
   */
  BatchResult apply(UpdateBatch<K> batch, Runnable betweenSteps) {
    Objects.requireNonNull(batch, "batch");
    if (batch.graph() != this) {
      throw new IllegalArgumentException(
          "the batch was made by another live graph; make it with this graph's newBatch()");
    }
    ensureOpen("apply a batch");
    LiveSnapshot<K> seen = current;
    int[][] resolved = BatchStage.preResolve(batch, seen.ids);
    BatchStage<K> ahead = null;
    if (BatchStage.canStageAhead(this, batch, resolved, seen)) {
      ahead = new BatchStage<>(this, seen, idTable, batch, resolved, true);
      try {
        ahead.stage();
        ahead.encodeAhead();
      } catch (RejectedUpdateException e) {
        ahead = null; // staged again under the lock, which reports it against the latest version
      }
    }
    if (betweenSteps != null) {
      betweenSteps.run();
    }
    BatchResult[] result = new BatchResult[1];
    LiveSnapshot<K> next;
    writeLock.lock();
    try {
      ensureOpen("apply a batch");
      BatchStage<K> stage = ahead;
      if (stage == null || !stage.rebaseOnto(current)) {
        stage = new BatchStage<>(this, current, idTable, batch, resolved, false);
        stage.stage();
      }
      next = stage.commit(result);
      for (Consumer<BatchResult> follower : followers) {
        follower.accept(result[0]); // before publishing, so a follower never lags a snapshot
      }
      current = next;
      if (changeLog != null) {
        changeLog.record(result[0]);
      }
    } finally {
      writeLock.unlock();
    }
    if (compactor != null && needsCompaction(next)) {
      synchronized (compactionSignal) {
        if (!compactionRequested) {
          compactionRequested = true;
          compactionSignal.notifyAll();
        }
      }
    }
    return result[0];
  }

  /**
   * Returns the latest version. O(1): one volatile read; never blocks. Still works after {@link
   * #close()} (it returns the last version).
   *
   * @return an immutable snapshot
   */
  public LiveSnapshot<K> snapshot() {
    return current;
  }

  /**
   * Registers {@code follower} to receive every batch's result from now on, and returns the version
   * it follows from, atomically: the follower sees exactly the batches after that snapshot, each
   * before any snapshot that includes it is published. The follower runs under the write lock, so
   * it must be O(1) and must not throw (an incremental scorer queues the result).
   *
   * @throws IllegalStateException if the graph is closed
   */
  LiveSnapshot<K> follow(Consumer<BatchResult> follower) {
    writeLock.lock();
    try {
      ensureOpen("follow");
      followers.add(follower);
      return current;
    } finally {
      writeLock.unlock();
    }
  }

  /** Stops sending batch results to {@code follower}; no-op if it was not registered. */
  void unfollow(Consumer<BatchResult> follower) {
    followers.remove(follower);
  }

  /**
   * Folds all deltas into a new base CSR and feature matrix, without blocking readers and blocking
   * writers only briefly (see the class description), and publishes the result under the same
   * version number. Returns at once when there are no deltas; one compaction runs at a time (a
   * second caller waits for the first and then compacts what is left). O(n·f + n + E) time.
   *
   * @return the compacted snapshot that was published (or a later one, when no deltas were left)
   * @throws IllegalStateException if the graph is closed, before or during the compaction (which
   *     then leaves the graph as it was)
   */
  public LiveSnapshot<K> compact() {
    compactionLock.lock();
    try {
      LiveSnapshot<K> start;
      writeLock.lock();
      try {
        ensureOpen("compact");
        start = current;
        if (start.isCompact()) {
          return start;
        }
        changeLog = new ChangeLog();
      } finally {
        writeLock.unlock();
      }
      try {
        return compactFrom(start);
      } finally {
        writeLock.lock();
        try {
          changeLog = null;
        } finally {
          writeLock.unlock();
        }
      }
    } finally {
      compactionLock.unlock();
    }
  }

  private LiveSnapshot<K> compactFrom(LiveSnapshot<K> start) {
    long began = System.nanoTime();
    Compaction<K> compaction = new Compaction<>(start, this::isClosed);
    for (int round = 1; ; round++) {
      LiveSnapshot<K> latest;
      ChangeLog.Taken taken;
      writeLock.lock();
      try {
        ensureOpen("compact");
        latest = current;
        if (changeLog.pending() <= finishUnderLock || round > MAX_CATCH_UP_ROUNDS) {
          compaction.rebase(latest, changeLog.take().nodes());
          LiveSnapshot<K> compacted = compaction.finish(latest);
          current = compacted;
          if (LOG.isDebugEnabled()) {
            LOG.debug(
                "compacted version {} ({} nodes, {} entries) in {} ms, {} rounds",
                compacted.version,
                compacted.nodeCount,
                compacted.edgeCount,
                (System.nanoTime() - began) / 1_000_000,
                round);
          }
          return compacted;
        }
        taken = changeLog.take();
      } finally {
        writeLock.unlock();
      }
      compaction.rebase(latest, taken.nodes());
    }
  }

  /**
   * Closes the graph to updates: later {@link #apply} and {@link #compact()} calls throw {@link
   * IllegalStateException}; snapshots stay readable. Stops the background compaction thread and
   * waits for it (a compaction in progress stops at its next check, within 65,536 rows, and leaves
   * the graph as it was). Idempotent.
   */
  @Override
  public void close() {
    writeLock.lock();
    try {
      closed = true;
    } finally {
      writeLock.unlock();
    }
    if (compactor != null) {
      synchronized (compactionSignal) {
        compactionSignal.notifyAll();
      }
      if (compactor != Thread.currentThread()) {
        boolean interrupted = false;
        while (compactor.isAlive()) {
          try {
            compactor.join();
          } catch (InterruptedException e) {
            interrupted = true;
          }
        }
        if (interrupted) {
          Thread.currentThread().interrupt();
        }
      }
    }
  }

  /**
   * Returns whether {@link #close()} was called.
   *
   * @return true once closed
   */
  public boolean isClosed() {
    return closed;
  }

  /**
   * Returns the number of features per node.
   *
   * @return f, at least 1
   */
  public int featureCount() {
    return featureCount;
  }

  /**
   * Returns the self-loop policy.
   *
   * @return the policy
   */
  public SelfLoopPolicy selfLoops() {
    return selfLoops;
  }

  /**
   * Returns the direction policy.
   *
   * @return the policy
   */
  public DirectionPolicy direction() {
    return direction;
  }

  /**
   * Returns the duplicate-edge policy.
   *
   * @return the policy
   */
  public DuplicatePolicy duplicates() {
    return duplicates;
  }

  /**
   * Returns whether a daemon thread compacts in the background.
   *
   * @return true unless switched off in the builder
   */
  public boolean compactsInBackground() {
    return compactor != null;
  }

  /** For tests: finish compactions under the lock only at this many pending changes or fewer. */
  void finishUnderLockAt(long pendingChanges) {
    finishUnderLock = pendingChanges;
  }

  boolean addsSelfLoops() {
    return selfLoops == SelfLoopPolicy.ADD;
  }

  boolean symmetrises() {
    return direction == DirectionPolicy.SYMMETRISE;
  }

  boolean rejectsDuplicates() {
    return duplicates == DuplicatePolicy.REJECT;
  }

  private void ensureOpen(String what) {
    if (closed) {
      throw new IllegalStateException(
          "cannot " + what + ": the live graph is closed (snapshots remain readable)");
    }
  }

  /** Whether the deltas of {@code snapshot} are large enough to compact in the background. */
  boolean needsCompaction(LiveSnapshot<K> snapshot) {
    LiveMemory memory = snapshot.memory();
    long deltas = memory.deltaBytes() + memory.featureDeltaBytes();
    long base = memory.baseGraphBytes() + memory.baseFeatureBytes();
    return deltas > Math.max(compactionMinBytes, compactionFraction * base);
  }

  private void compactWhenAsked() {
    while (true) {
      synchronized (compactionSignal) {
        while (!compactionRequested && !closed) {
          try {
            compactionSignal.wait();
          } catch (InterruptedException e) {
            return;
          }
        }
        if (closed) {
          return;
        }
        compactionRequested = false;
      }
      if (!needsCompaction(current)) {
        continue;
      }
      try {
        compact();
      } catch (IllegalStateException e) {
        if (closed) {
          return;
        }
        LOG.error("background compaction of the live graph failed; the graph keeps its deltas", e);
      } catch (RuntimeException | OutOfMemoryError e) {
        LOG.error("background compaction of the live graph failed; the graph keeps its deltas", e);
      }
    }
  }

  /**
   * Configures and creates a {@link VersionedGraph}. Defaults: {@link
   * CsrGraphBuilder#DEFAULT_SELF_LOOPS}, {@link CsrGraphBuilder#DEFAULT_DIRECTION}, {@link
   * CsrGraphBuilder#DEFAULT_DUPLICATES} (the batch builders' defaults), background compaction at
   * {@link #DEFAULT_COMPACTION_FRACTION} of the base and at least {@link
   * #DEFAULT_COMPACTION_MIN_BYTES}.
   *
   * <p>Thread safety: not thread safe; use one builder per thread.
   */
  public static final class Builder {
    private final int featureCount;
    private SelfLoopPolicy selfLoops = CsrGraphBuilder.DEFAULT_SELF_LOOPS;
    private DirectionPolicy direction = CsrGraphBuilder.DEFAULT_DIRECTION;
    private DuplicatePolicy duplicates = CsrGraphBuilder.DEFAULT_DUPLICATES;
    private boolean background = true;
    private double compactionFraction = DEFAULT_COMPACTION_FRACTION;
    private long compactionMinBytes = DEFAULT_COMPACTION_MIN_BYTES;

    private Builder(int featureCount) {
      this.featureCount = featureCount;
    }

    /**
     * Sets the self-loop policy.
     *
     * @param policy the policy, not null
     * @return this builder
     */
    public Builder selfLoops(SelfLoopPolicy policy) {
      this.selfLoops = Objects.requireNonNull(policy, "selfLoops policy");
      return this;
    }

    /**
     * Sets the direction policy.
     *
     * @param policy the policy, not null
     * @return this builder
     */
    public Builder direction(DirectionPolicy policy) {
      this.direction = Objects.requireNonNull(policy, "direction policy");
      return this;
    }

    /**
     * Sets the duplicate-edge policy.
     *
     * @param policy the policy, not null
     * @return this builder
     */
    public Builder duplicates(DuplicatePolicy policy) {
      this.duplicates = Objects.requireNonNull(policy, "duplicates policy");
      return this;
    }

    /**
     * Sets whether a daemon thread compacts when the deltas grow past the threshold; when off, the
     * caller calls {@link VersionedGraph#compact()}.
     *
     * @param enabled true for background compaction (the default)
     * @return this builder
     */
    public Builder backgroundCompaction(boolean enabled) {
      this.background = enabled;
      return this;
    }

    /**
     * Sets when background compaction starts: once the deltas' bytes exceed both {@code fraction}
     * of the base's bytes (rows and features) and {@code minBytes}.
     *
     * @param fraction a share of the base, above 0 and at most 100
     * @param minBytes a floor in bytes, at least 0
     * @return this builder
     * @throws IllegalArgumentException if a value is out of range
     */
    public Builder compactionThreshold(double fraction, long minBytes) {
      if (!(fraction > 0 && fraction <= 100) || minBytes < 0) {
        throw new IllegalArgumentException(
            "compaction threshold needs 0 < fraction <= 100 and minBytes >= 0, got fraction = "
                + fraction
                + ", minBytes = "
                + minBytes);
      }
      this.compactionFraction = fraction;
      this.compactionMinBytes = minBytes;
      return this;
    }

    /**
     * Creates the empty graph (version 0) and, if enabled, starts its compaction thread.
     *
     * @param <K> the type of the caller's node ids
     * @return the graph; {@link VersionedGraph#close() close} it when done
     */
    public <K> VersionedGraph<K> build() {
      return new VersionedGraph<>(this, null);
    }

    /**
     * Creates a live graph that starts where a saved one left off: the same nodes by the same ids
     * and indices, the same rows and the same features, as one compacted base (written by {@link
     * LiveSnapshot#saveTo} or {@link SavedGraphFile#write}, read with {@link
     * SavedGraphFile#readStringIds} or {@link SavedGraphFile#readLongIds}). Its first version is
     * the saved version plus one, so versions keep increasing across a restart. Later batches
     * follow this builder's policies, which must be those the saved rows were made with: the rows
     * are checked against them (under {@link SelfLoopPolicy#ADD} every row must hold its self-loop;
     * under {@link DirectionPolicy#SYMMETRISE} every entry must have its mirror).
     *
     * <p>The saved graph's arrays are used as they are, not copied. Cost: O(n) for the ids, plus
     * O(E log d) for the symmetry check under {@code SYMMETRISE}.
     *
     * @param saved input, not modified: the rows, ids, features and version to start from
     * @param <K> the type of the caller's node ids
     * @return the graph; {@link VersionedGraph#close() close} it when done
     * @throws IllegalArgumentException if the feature count differs from this builder's, or the
     *     rows break this builder's policies (the message names the row and the policy)
     */
    public <K> VersionedGraph<K> restore(SavedGraph<K> saved) {
      Objects.requireNonNull(saved, "saved");
      if (saved.features().featureCount() != featureCount) {
        throw new IllegalArgumentException(
            "the saved graph has "
                + saved.features().featureCount()
                + " features per node, this builder "
                + featureCount
                + "; build with VersionedGraph.builder("
                + saved.features().featureCount()
                + ")");
      }
      checkPolicies(saved.graph());
      return new VersionedGraph<>(this, saved);
    }

    private void checkPolicies(IndexedGraph<?> saved) {
      CsrGraph rows = saved.graph();
      for (int target = 0; target < rows.nodeCount(); target++) {
        if (selfLoops == SelfLoopPolicy.ADD && rows.entryOf(target, target) < 0) {
          throw new IllegalArgumentException(
              "row of node "
                  + saved.nodes().idOf(target)
                  + " (index "
                  + target
                  + ") has no self-loop, but SelfLoopPolicy.ADD gives every node one; restore"
                  + " with the policies the graph was saved with");
        }
        if (direction != DirectionPolicy.SYMMETRISE) {
          continue;
        }
        for (int entry = rows.rowStart(target); entry < rows.rowEnd(target); entry++) {
          int source = rows.column(entry);
          if (rows.entryOf(source, target) < 0) {
            throw new IllegalArgumentException(
                "node "
                    + saved.nodes().idOf(target)
                    + " attends to "
                    + saved.nodes().idOf(source)
                    + " but not the reverse, so the rows are not symmetric as"
                    + " DirectionPolicy.SYMMETRISE keeps them; restore with the policies the graph"
                    + " was saved with");
          }
        }
      }
    }
  }
}
