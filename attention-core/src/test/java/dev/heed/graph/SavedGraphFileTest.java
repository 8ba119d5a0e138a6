package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Saving and loading a graph with its ids and features ({@link SavedGraphFile}): exact round trips
 * for every id kind and a live graph's snapshot; every truncation and every damaged byte of a
 * section rejected with a message; and a child JVM killed in the middle of saving leaves the
 * previous file intact and its torn partial file rejected.
 */
class SavedGraphFileTest {

  @TempDir Path dir;

  private static NodeFeatures features(int n, int f, long seed) {
    SplittableRandom random = new SplittableRandom(seed);
    float[] x = new float[n * f];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    return NodeFeatures.ofRowMajor(x, n, f);
  }

  private static <K> void assertSame(SavedGraph<K> expected, SavedGraph<K> actual) {
    assertEquals(expected.graph().graph(), actual.graph().graph());
    int n = expected.graph().graph().nodeCount();
    for (int i = 0; i < n; i++) {
      assertEquals(expected.graph().nodes().idOf(i), actual.graph().nodes().idOf(i));
      assertEquals(i, actual.graph().nodes().indexOf(actual.graph().nodes().idOf(i)));
      for (int c = 0; c < expected.features().featureCount(); c++) {
        assertEquals(
            Float.floatToRawIntBits(expected.features().value(i, c)),
            Float.floatToRawIntBits(actual.features().value(i, c)));
      }
    }
    assertEquals(expected.version(), actual.version());
  }

  @Test
  void roundTripsEveryIdKindExactly() throws IOException {
    Path edges = Files.writeString(dir.resolve("g.csv"), "a,b\nb,c\nc,a\nd,d\n\"é,x\",a\n");
    IndexedGraph<String> strings = EdgeListFileBuilder.stringIds(edges).build().indexed();
    Path longEdges = Files.writeString(dir.resolve("l.csv"), "10,-3\n-3,77\n9000000000,10\n");
    IndexedGraph<Long> longs = EdgeListFileBuilder.integerIds(longEdges).build().indexed();
    IndexedGraph<Long> indices =
        EdgeListFileBuilder.indexIds(Files.writeString(dir.resolve("i.csv"), "0,1\n1,2\n"))
            .build()
            .indexed();
    IndexedGraph<Long> empty =
        EdgeListFileBuilder.indexIds(Files.writeString(dir.resolve("e.csv"), "")).build().indexed();
    Path file = dir.resolve("g.heedgraph");

    SavedGraph<String> s = new SavedGraph<>(strings, features(5, 3, 1), 12);
    SavedGraphFile.write(file, s.graph(), s.features(), s.version());
    assertSame(s, SavedGraphFile.readStringIds(file));
    SavedGraphFormatException wrongKind =
        assertThrows(SavedGraphFormatException.class, () -> SavedGraphFile.readLongIds(file));
    assertTrue(
        wrongKind.getMessage().contains("read it with readStringIds"), wrongKind.getMessage());

    SavedGraph<Long> l = new SavedGraph<>(longs, features(4, 1, 2), 0);
    SavedGraphFile.write(file, l.graph(), l.features(), 0);
    assertSame(l, SavedGraphFile.readLongIds(file));
    SavedGraph<Long> i = new SavedGraph<>(indices, features(3, 2, 3), 5);
    SavedGraphFile.write(file, i.graph(), i.features(), 5);
    assertSame(i, SavedGraphFile.readLongIds(file));
    assertEquals(0, empty.graph().nodeCount());
    SavedGraphFile.write(file, empty, features(0, 2, 3), 0);
    assertEquals(0, SavedGraphFile.readLongIds(file).graph().graph().nodeCount());
    try (Stream<Path> left = Files.list(dir)) {
      assertTrue(left.noneMatch(p -> p.toString().endsWith(".partial")), "partial files left");
    }
  }

  @Test
  void aLiveGraphsSnapshotRoundTrips() throws IOException {
    try (VersionedGraph<String> live =
        VersionedGraph.builder(2).direction(DirectionPolicy.SYMMETRISE).build()) {
      UpdateBatch<String> batch = live.newBatch();
      for (int i = 0; i < 50; i++) {
        batch.addNode("n" + i, new float[] {i, -0.5f * i});
      }
      for (int i = 1; i < 50; i++) {
        batch.addEdge("n" + i, "n" + (i * 7 % i));
      }
      live.apply(batch);
      live.apply(live.newBatch().removeEdge("n1", "n0").addEdge("n3", "n9"));
      LiveSnapshot<String> now = live.snapshot();
      var compacted = now.compacted();
      Path file = dir.resolve("live.heedgraph");
      SavedGraphFile.write(file, compacted.indexedGraph(), compacted.features(), now.version());
      SavedGraph<String> back = SavedGraphFile.readStringIds(file);
      assertSame(
          new SavedGraph<>(compacted.indexedGraph(), compacted.features(), now.version()), back);
      assertEquals(now.toIndexedGraph().graph(), back.graph().graph());
    }
  }

  @Test
  void everyTruncationAndDamagedByteIsRejected() throws IOException {
    IndexedGraph<String> g =
        EdgeListFileBuilder.stringIds(Files.writeString(dir.resolve("g.csv"), "a,b\nb,c\nc,d\n"))
            .build()
            .indexed();
    Path file = dir.resolve("g.heedgraph");
    SavedGraphFile.write(file, g, features(4, 2, 4), 3);
    byte[] whole = Files.readAllBytes(file);
    Path broken = dir.resolve("broken.heedgraph");
    for (int cut = 0; cut < whole.length; cut++) {
      Files.write(broken, java.util.Arrays.copyOf(whole, cut));
      SavedGraphFormatException e =
          assertThrows(SavedGraphFormatException.class, () -> SavedGraphFile.readStringIds(broken));
      assertTrue(
          e.getMessage().contains("truncated") || e.getMessage().contains("shorter than a header"),
          "cut at " + cut + ": " + e.getMessage());
    }
    for (int at = 0; at < whole.length; at++) {
      byte[] damaged = whole.clone();
      damaged[at] ^= 0x10;
      Files.write(broken, damaged);
      assertThrows(
          SavedGraphFormatException.class,
          () -> SavedGraphFile.readStringIds(broken),
          "damaged byte " + at);
    }
  }

  /** The graph the child saves again and again (versions 1, 2, ...) and the test checks. */
  static SavedGraph<Long> childGraph(long version) {
    CsrGraph graph = RmatGenerator.withScale(17).edgeFactor(16).seed(5L).generateEdges().build();
    return new SavedGraph<>(
        new IndexedGraph<>(graph, LongNodeIndex.identity(graph.nodeCount())),
        features(graph.nodeCount(), 16, 5),
        version);
  }

  /** Runs in the child JVM: saves args[0] over and over until killed. */
  public static void main(String[] args) throws IOException {
    SavedGraph<Long> g = childGraph(0);
    Path target = Path.of(args[0]);
    System.out.println("saving");
    System.out.flush();
    for (long version = 1; ; version++) {
      SavedGraphFile.write(target, g.graph(), g.features(), version);
    }
  }

  @Test
  void killingTheWriterMidSaveLeavesThePreviousFileAndRejectsTheTornOne() throws Exception {
    Path target = dir.resolve("kill.heedgraph");
    SavedGraph<Long> expected = childGraph(0);
    SavedGraphFile.write(target, expected.graph(), expected.features(), 0);
    int tornSeen = 0;
    for (int attempt = 0; attempt < 5 && tornSeen == 0; attempt++) {
      Process child =
          new ProcessBuilder(
                  ChildJvm.command(
                      SavedGraphFileTest.class, List.of("-Xmx512m"), target.toString()))
              .redirectErrorStream(true)
              .start();
      try {
        byte[] hello = child.getInputStream().readNBytes(7);
        assertEquals("saving\n", new String(hello, StandardCharsets.US_ASCII));
        Thread.sleep(300 + 150L * attempt);
        List<Path> partial = partials();
        long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(20);
        while (partial.isEmpty() && System.nanoTime() < deadline) {
          Thread.onSpinWait();
          partial = partials();
        }
      } finally {
        child.destroyForcibly();
        assertTrue(child.waitFor(30, TimeUnit.SECONDS), "child did not end");
      }
      SavedGraph<Long> survived = SavedGraphFile.readLongIds(target);
      assertEquals(expected.graph().graph(), survived.graph().graph());
      assertSame(
          new SavedGraph<>(expected.graph(), expected.features(), survived.version()), survived);
      for (Path p : partials()) {
        try {
          // complete but not yet renamed when the child died
          assertEquals(expected.graph().graph(), SavedGraphFile.readLongIds(p).graph().graph());
        } catch (SavedGraphFormatException e) {
          assertTrue(e.getMessage().contains("truncated"), e.getMessage());
          tornSeen++;
        }
        Files.delete(p);
      }
    }
    assertTrue(tornSeen > 0, "no kill landed in the middle of a save in 5 attempts");
  }

  private List<Path> partials() throws IOException {
    List<Path> found = new ArrayList<>();
    try (Stream<Path> files = Files.list(dir)) {
      files.filter(p -> p.toString().endsWith(".partial")).forEach(found::add);
    }
    return found;
  }
}
