package dev.heed.npy;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Checks the {@code .npy} reader and writer against files written by NumPy itself ({@code
 * make_npy_fixtures.py} beside the fixtures) and against the format description in NumPy's {@code
 * numpy.lib.format} documentation (magic, version, little-endian header length, dict literal).
 */
class NpyTest {

  static byte[] resource(String name) throws IOException {
    try (InputStream in = NpyTest.class.getResourceAsStream(name)) {
      if (in == null) {
        throw new IOException("missing test resource " + name);
      }
      return in.readAllBytes();
    }
  }

  static NpyArray read(byte[] bytes, String name) throws IOException {
    return Npy.read(new ByteArrayInputStream(bytes), name, NpyLimits.defaults());
  }

  /** Element k of every fixture, as make_npy_fixtures.py computes it. */
  static double fixtureValue(int k, boolean floating) {
    return floating ? 0.5 * k - 3.25 + 0.001 * k * k : 7 * k - 11;
  }

  @Test
  void readsEveryAcceptedTypeWrittenByNumpy() throws IOException {
    record Case(String file, NpyDataType type, int[] shape) {}
    Case[] cases = {
      new Case("f4_2x3.npy", NpyDataType.FLOAT32, new int[] {2, 3}),
      new Case("f8_4.npy", NpyDataType.FLOAT64, new int[] {4}),
      new Case("i4_3x1x2.npy", NpyDataType.INT32, new int[] {3, 1, 2}),
      new Case("i8_5.npy", NpyDataType.INT64, new int[] {5}),
      new Case("f4_scalar.npy", NpyDataType.FLOAT32, new int[] {}),
      new Case("f4_0x3.npy", NpyDataType.FLOAT32, new int[] {0, 3}),
    };
    for (Case c : cases) {
      byte[] bytes = resource(c.file());
      NpyArray a = read(bytes, c.file());
      assertEquals(c.type(), a.dataType(), c.file());
      assertArrayEquals(c.shape(), a.shape(), c.file());
      double[] values = a.toDoubles();
      for (int k = 0; k < values.length; k++) {
        double expected = fixtureValue(k, c.type().isFloatingPoint());
        if (c.file().startsWith("f4_0")) {
          expected = 0;
        }
        if (c.type() == NpyDataType.FLOAT32) {
          expected = (float) expected;
        }
        assertEquals(expected, values[k], 0.0, c.file() + " element " + k);
      }
      // NumPy's own encoding (version 1.0, 64-byte aligned header) is reproduced byte for byte.
      assertArrayEquals(bytes, Npy.toBytes(a), c.file() + ": rewrite differs from NumPy's bytes");
    }
  }

  @Test
  void roundTripIsBitIdenticalForRandomBitsIncludingNaNPayloads() throws IOException {
    long seed = 20261201L;
    Random random = new Random(seed);
    float[] f = new float[37];
    for (int i = 0; i < f.length; i++) {
      f[i] = Float.intBitsToFloat(random.nextInt()); // any bits: NaN payloads, -0, subnormals
    }
    NpyArray a = NpyArray.ofFloats(f, 37);
    byte[] first = Npy.toBytes(a);
    NpyArray b = read(first, "random");
    assertEquals(a, b, "seed " + seed);
    assertArrayEquals(first, Npy.toBytes(b), "seed " + seed);
    float[] back = b.toFloats();
    for (int i = 0; i < f.length; i++) {
      assertEquals(Float.floatToRawIntBits(f[i]), Float.floatToRawIntBits(back[i]), "seed " + seed);
    }
  }

  @Test
  void rejectsBigEndian() throws IOException {
    NpyFormatException e =
        assertThrows(NpyFormatException.class, () -> read(resource("be_f4.npy"), "be_f4.npy"));
    assertTrue(e.getMessage().contains("big-endian"), e.getMessage());
    assertTrue(e.getMessage().startsWith("be_f4.npy: "), e.getMessage());
  }

  @Test
  void rejectsFortranOrderObjectAndBool() throws IOException {
    assertMessage("fortran_f4.npy", "Fortran-order");
    assertMessage("object.npy", "object arrays");
    assertMessage("bool.npy", "unsupported element type '|b1'");
  }

  private static void assertMessage(String file, String fragment) throws IOException {
    byte[] bytes = resource(file);
    NpyFormatException e = assertThrows(NpyFormatException.class, () -> read(bytes, file));
    assertTrue(e.getMessage().contains(fragment), e.getMessage());
    assertEquals(file, e.entry());
  }

  @Test
  void rejectsTruncatedAndOverlongData() throws IOException {
    byte[] bytes = resource("f4_2x3.npy");
    for (int cut : new int[] {0, 5, 9, 40, bytes.length - 1}) {
      byte[] truncated = Arrays.copyOf(bytes, cut);
      NpyFormatException e =
          assertThrows(NpyFormatException.class, () -> read(truncated, "t"), "cut at " + cut);
      assertTrue(e.getMessage().contains("truncated"), e.getMessage());
    }
    byte[] longer = Arrays.copyOf(bytes, bytes.length + 3);
    NpyFormatException e = assertThrows(NpyFormatException.class, () -> read(longer, "long"));
    assertTrue(e.getMessage().contains("data length mismatch"), e.getMessage());
  }

  /** Builds a version-1.0 file with the given header text and data. */
  static byte[] handMade(int major, String header, byte[] data) {
    byte[] text = header.getBytes(StandardCharsets.ISO_8859_1);
    int lengthBytes = major == 1 ? 2 : 4;
    byte[] out = new byte[8 + lengthBytes + text.length + data.length];
    System.arraycopy(Npy.MAGIC, 0, out, 0, 6);
    out[6] = (byte) major;
    for (int i = 0; i < lengthBytes; i++) {
      out[8 + i] = (byte) (text.length >>> (8 * i));
    }
    System.arraycopy(text, 0, out, 8 + lengthBytes, text.length);
    System.arraycopy(data, 0, out, 8 + lengthBytes + text.length, data.length);
    return out;
  }

  @Test
  void rejectsBadHeaders() {
    String ok = "{'descr': '<f4', 'fortran_order': False, 'shape': (2,), }\n";
    byte[] eight = new byte[8];
    record Bad(byte[] bytes, String fragment) {}
    Bad[] cases = {
      new Bad(handMade(4, ok, eight), "unsupported .npy format version 4.0"),
      new Bad(handMade(1, ok.replace("(2,)", "(-2,)"), eight), "negative dimension"),
      new Bad(handMade(1, ok.replace("(2,)", "(99999999999,)"), eight), "exceeds"),
      // 2^31-1 squared elements: rejected from the header, before any allocation.
      new Bad(handMade(1, ok.replace("(2,)", "(2147483647, 2147483647)"), eight), "more bytes"),
      new Bad(handMade(1, ok.replace("(2,)", "(200000000,)"), eight), "limit"),
      new Bad(handMade(1, ok.replace("'shape'", "'shap'"), eight), "unexpected header key"),
      new Bad(handMade(1, ok.replace("'shape': (2,), ", ""), eight), "missing 'shape'"),
      new Bad(handMade(1, ok.replace("False", "Maybe"), eight), "True or False"),
      new Bad(handMade(1, ok.replace("<f4", "<c8"), eight), "unsupported element type"),
      new Bad(handMade(1, ok + "x", eight), "unexpected text"),
      new Bad(handMade(1, "[1, 2]", eight), "expected '{'"),
      new Bad("GIF89a-not-numpy".getBytes(StandardCharsets.ISO_8859_1), "not a .npy file"),
    };
    for (Bad bad : cases) {
      NpyFormatException e =
          assertThrows(NpyFormatException.class, () -> read(bad.bytes(), "hand"), bad.fragment());
      assertTrue(e.getMessage().contains(bad.fragment()), e.getMessage());
    }
    byte[] hugeHeader = handMade(2, ok, eight);
    hugeHeader[10] = 0;
    hugeHeader[11] = 0x7F; // header length 0x7F00xxxx
    NpyFormatException e = assertThrows(NpyFormatException.class, () -> read(hugeHeader, "h"));
    assertTrue(e.getMessage().contains("header claims"), e.getMessage());
  }

  @Test
  void acceptsVersion2And3Headers() throws IOException {
    String ok = "{'descr': '<i4', 'fortran_order': False, 'shape': (2,), }\n";
    byte[] data = {1, 0, 0, 0, 2, 0, 0, 0};
    for (int major : new int[] {2, 3}) {
      NpyArray a = read(handMade(major, ok, data), "v" + major);
      assertArrayEquals(new int[] {1, 2}, a.toInts());
    }
  }
}
