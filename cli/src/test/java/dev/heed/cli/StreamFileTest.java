package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The stream reader: what it accepts, and a clear error (file, line, remedy) for what it does not.
 */
class StreamFileTest {

  private static final List<String> NAMES = List.of("f0", "f1");
  private static final String HEADER = "time,kind,source,target,f0,f1\n";

  @TempDir Path dir;

  private List<StreamFile.Event> read(String text) throws IOException {
    Path file = Files.writeString(dir.resolve("stream.csv"), text, StandardCharsets.UTF_8);
    return StreamFile.read(file, NAMES, NAMES.size());
  }

  private String error(String text) {
    return assertThrows(CliException.class, () -> read(text)).getMessage();
  }

  @Test
  void readsEveryKind() throws IOException {
    List<StreamFile.Event> events =
        read(
            "\uFEFF# a comment\r\n"
                + HEADER
                + "0,add-node,\"acct, new\",,0.5,-1.25\r\n"
                + "\n"
                + "1.5,add-edge,a,\"acct, new\",,\n"
                + "1.5,remove-edge,a,b,,\n"
                + "2e1,set-features,a,,3,4\n");
    assertEquals(4, events.size());
    assertEquals(StreamFile.Kind.ADD_NODE, events.get(0).kind());
    assertEquals("acct, new", events.get(0).source());
    assertArrayEquals(new float[] {0.5f, -1.25f}, events.get(0).features());
    assertEquals(3, events.get(0).line());
    assertEquals("acct, new", events.get(1).target());
    assertEquals(1.5, events.get(2).time());
    assertEquals(StreamFile.Kind.SET_FEATURES, events.get(3).kind());
    assertEquals(20.0, events.get(3).time());
  }

  @Test
  void featureColumnsMayBeLeftOutWhenNoEventCarriesFeatures() throws IOException {
    List<StreamFile.Event> events = read("time,kind,source,target\n1,add-edge,a,b\n");
    assertEquals(1, events.size());
    String m = error("time,kind,source,target\n1,add-node,c,\n");
    assertTrue(m.contains("line 2") && m.contains("no feature columns"), m);
  }

  @Test
  void malformedLinesNameFileLineAndRemedy() {
    String m = error(HEADER + "1,add-edge,a,b\n");
    assertTrue(m.contains("stream.csv, line 2") && m.contains("expected 6 fields"), m);
    m = error(HEADER + "soon,add-edge,a,b,,\n");
    assertTrue(m.contains("line 2") && m.contains("time 'soon'"), m);
    m = error(HEADER + "NaN,add-edge,a,b,,\n");
    assertTrue(m.contains("not a number of seconds"), m);
    m = error(HEADER + "1,add-edge,a,,,\n");
    assertTrue(m.contains("target"), m);
    m = error(HEADER + "1,add-edge,,b,,\n");
    assertTrue(m.contains("source"), m);
    m = error(HEADER + "1,add-edge,a,b,1,2\n");
    assertTrue(m.contains("leave the feature fields empty"), m);
    m = error(HEADER + "1,add-node,a,b,1,2\n");
    assertTrue(m.contains("leave target empty"), m);
    m = error(HEADER + "1,add-node,a,,1,x\n");
    assertTrue(m.contains("feature 2 of node 'a' is 'x'"), m);
    m = error(HEADER + "1,add-node,a,,1,Infinity\n");
    assertTrue(m.contains("not a finite number"), m);
    m = error(HEADER + "1,add-edge,\"a,b,,\n");
    assertTrue(m.contains("line") && m.contains("double quotes"), m);
  }

  @Test
  void unknownKindsAreNamed() {
    String m = error(HEADER + "1,add-edge,a,b,,\n2,transfer,a,b,,\n");
    assertTrue(m.contains("line 3") && m.contains("unknown kind 'transfer'"), m);
    assertTrue(m.contains("add-edge, remove-edge, add-node or set-features"), m);
  }

  /** Out-of-order times are refused, not reordered: the file's order is the replay's order. */
  @Test
  void timesOutOfOrderAreRefused() {
    String m = error(HEADER + "5,add-edge,a,b,,\n5,add-edge,b,c,,\n4.5,add-edge,c,a,,\n");
    assertTrue(
        m.contains("line 4") && m.contains("earlier than the previous event's (5, line 3)"), m);
    assertTrue(m.contains("sort the file"), m);
  }

  @Test
  void headerIsChecked() {
    String m = error("when,kind,source,target,f0,f1\n");
    assertTrue(m.contains("line 1") && m.contains("must start with time,kind,source,target"), m);
    m = error("time,kind,source,target,f0\n");
    assertTrue(m.contains("1 feature columns") && m.contains("reads 2"), m);
    m = error("time,kind,source,target,f1,f0\n");
    assertTrue(m.contains("differ from the model's feature names [f0, f1]"), m);
    m = error("# only a comment\n");
    assertTrue(m.contains("no header line"), m);
  }

  /** Seeded random events with awkward ids and numbers read back exactly as written. */
  @Test
  void randomRoundTrips() throws IOException {
    for (long seed = 1; seed <= 20; seed++) {
      SplittableRandom random = new SplittableRandom(seed);
      StringBuilder text = new StringBuilder(HEADER);
      List<String[]> expected = new ArrayList<>();
      List<float[]> features = new ArrayList<>();
      double time = random.nextDouble() * 1e6;
      int count = 1 + random.nextInt(60);
      for (int e = 0; e < count; e++) {
        time += random.nextInt(3) == 0 ? 0 : random.nextDouble() * 100;
        StreamFile.Kind kind = StreamFile.Kind.values()[random.nextInt(4)];
        String source = awkwardId(random);
        String target = kind.isEdge() ? awkwardId(random) : "";
        float[] x =
            kind.isEdge()
                ? new float[0]
                : new float[] {(float) random.nextGaussian() * 1e3f, Float.MIN_VALUE * e};
        text.append(StreamFile.decimal(time))
            .append(',')
            .append(kind.word())
            .append(',')
            .append(TextFields.csv(source))
            .append(',')
            .append(TextFields.csv(target));
        for (int c = 0; c < 2; c++) {
          text.append(',').append(x.length == 0 ? "" : Float.toString(x[c]));
        }
        text.append(random.nextBoolean() ? "\n" : "\r\n");
        expected.add(new String[] {Double.toString(time), kind.word(), source, target});
        features.add(x);
      }
      List<StreamFile.Event> events = read(text.toString());
      assertEquals(count, events.size(), "seed " + seed);
      for (int e = 0; e < count; e++) {
        StreamFile.Event got = events.get(e);
        String where = "seed " + seed + ", event " + e;
        assertEquals(Double.parseDouble(expected.get(e)[0]), got.time(), where);
        assertEquals(expected.get(e)[1], got.kind().word(), where);
        assertEquals(expected.get(e)[2], got.source(), where);
        assertEquals(expected.get(e)[3], got.target(), where);
        assertArrayEquals(features.get(e), got.features(), where);
      }
    }
  }

  /** Ids with commas, quotes, line breaks and inner spaces (surrounding spaces are trimmed). */
  private static String awkwardId(SplittableRandom random) {
    String[] parts = {"acct", ",", "\"", "x y", "\n", "é", "-", "7"};
    StringBuilder id = new StringBuilder("n");
    int length = 1 + random.nextInt(5);
    for (int k = 0; k < length; k++) {
      id.append(parts[random.nextInt(parts.length)]);
    }
    return id.append('z').toString();
  }
}
