package dev.heed.npy;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.zip.CRC32;
import java.util.zip.ZipEntry;
import java.util.zip.ZipOutputStream;
import org.junit.jupiter.api.Test;

/**
 * Checks the {@code .npz} reader against archives written by {@code numpy.savez} and {@code
 * numpy.savez_compressed} (fixtures from {@code make_npy_fixtures.py}), and its limits against
 * hostile archives built here from the zip format (PKWARE APPNOTE.TXT, local file header layout).
 */
class NpzTest {

  static NpzContents read(byte[] bytes, NpyLimits limits) throws IOException {
    return Npz.read(new ByteArrayInputStream(bytes), "test.npz", limits);
  }

  @Test
  void readsNumpyArchivesStoredAndCompressed() throws IOException {
    for (String file : List.of("plain.npz", "compressed.npz")) {
      NpzContents c = read(NpyTest.resource(file), NpyLimits.defaults());
      assertEquals(List.of("weight", "bias", "ids"), List.copyOf(c.arrays().keySet()), file);
      NpyArray w = c.arrays().get("weight");
      assertArrayEquals(new int[] {2, 3}, w.shape());
      assertEquals(NpyDataType.FLOAT32, w.dataType());
      assertEquals((float) NpyTest.fixtureValue(5, true), w.toFloats()[5], 0f, file);
      assertEquals(NpyDataType.FLOAT64, c.arrays().get("bias").dataType());
      assertArrayEquals(new int[] {-11, -4, 3, 10}, c.arrays().get("ids").toInts(), file);
    }
  }

  @Test
  void readWriteReadIsBitIdenticalAndDeterministic() throws IOException {
    NpzContents c = read(NpyTest.resource("compressed.npz"), NpyLimits.defaults());
    Map<String, byte[]> other = Map.of("notes.json", "{\"a\": 1}".getBytes(StandardCharsets.UTF_8));
    byte[] first = Npz.toBytes(other, c.arrays());
    NpzContents again = read(first, NpyLimits.defaults());
    assertEquals(c.arrays(), again.arrays());
    assertArrayEquals(other.get("notes.json"), again.otherEntry("notes.json").orElseThrow());
    byte[] second = Npz.toBytes(other, again.arrays());
    assertArrayEquals(first, second, "writing the same contents twice must give the same bytes");
  }

  /** A stored entry whose local header declares {@code declaredSize} bytes. */
  static byte[] storedEntryDeclaring(String name, byte[] data, long declaredSize) {
    byte[] nameBytes = name.getBytes(StandardCharsets.UTF_8);
    ByteBuffer b =
        ByteBuffer.allocate(30 + nameBytes.length + data.length).order(ByteOrder.LITTLE_ENDIAN);
    CRC32 crc = new CRC32();
    crc.update(data);
    b.putInt(0x04034b50).putShort((short) 20).putShort((short) 0).putShort((short) 0);
    b.putShort((short) 0).putShort((short) 0x21); // 1980-01-01
    b.putInt((int) crc.getValue());
    b.putInt((int) declaredSize).putInt((int) declaredSize);
    b.putShort((short) nameBytes.length).putShort((short) 0).put(nameBytes).put(data);
    return b.array();
  }

  @Test
  void rejectsHugeDeclaredSizeBeforeReading() {
    byte[] zip = storedEntryDeclaring("w.npy", new byte[16], 0xFFFF_FFF0L);
    NpyFormatException e =
        assertThrows(NpyFormatException.class, () -> read(zip, NpyLimits.defaults()));
    assertTrue(e.getMessage().contains("declares"), e.getMessage());
    assertEquals("test.npz:w.npy", e.entry());
  }

  @Test
  void stopsAZipBombAtTheLimit() throws IOException {
    ByteArrayOutputStream buffer = new ByteArrayOutputStream();
    try (ZipOutputStream zip = new ZipOutputStream(buffer)) {
      zip.putNextEntry(new ZipEntry("filler.bin")); // deflated, size unknown until the end
      byte[] zeros = new byte[1 << 20];
      for (int i = 0; i < 64; i++) {
        zip.write(zeros);
      }
      zip.closeEntry();
    }
    byte[] bomb = buffer.toByteArray();
    assertTrue(bomb.length < 200_000, "64 MiB of zeros should compress well: " + bomb.length);
    NpyLimits limits = new NpyLimits(1 << 20, 2 << 20, 10);
    NpyFormatException e = assertThrows(NpyFormatException.class, () -> read(bomb, limits));
    assertTrue(e.getMessage().contains("limit"), e.getMessage());
  }

  @Test
  void rejectsAnArrayHeaderLargerThanWhatIsLeft() {
    String header = "{'descr': '<f8', 'fortran_order': False, 'shape': (1000000,), }\n";
    byte[] npy = NpyTest.handMade(1, header, new byte[8]);
    byte[] zip = storedEntryDeclaring("x.npy", npy, npy.length);
    NpyLimits limits = new NpyLimits(64 << 20, 1 << 20, 10);
    NpyFormatException e = assertThrows(NpyFormatException.class, () -> read(zip, limits));
    assertTrue(e.getMessage().contains("header announces"), e.getMessage());
  }

  @Test
  void rejectsTruncatedArchivesNotZipsAndBadNames() throws IOException {
    byte[] good = Npz.toBytes(Map.of(), Map.of("a", NpyArray.ofFloats(new float[64], 8, 8)));
    for (int cut : new int[] {10, 40, 200, 300}) {
      byte[] truncated = Arrays.copyOf(good, cut);
      assertThrows(
          NpyFormatException.class, () -> read(truncated, NpyLimits.defaults()), "cut " + cut);
    }
    assertThrows(
        NpyFormatException.class,
        () -> read("plain text".getBytes(StandardCharsets.UTF_8), NpyLimits.defaults()));
    byte[] evil = storedEntryDeclaring("../evil.npy", new byte[0], 0);
    NpyFormatException e =
        assertThrows(NpyFormatException.class, () -> read(evil, NpyLimits.defaults()));
    assertTrue(e.getMessage().contains(".."), e.getMessage());
    Map<String, NpyArray> arrays = new LinkedHashMap<>();
    arrays.put("/abs", NpyArray.ofInts(new int[] {1}, 1));
    assertThrows(IllegalArgumentException.class, () -> Npz.toBytes(Map.of(), arrays));
  }

  @Test
  void rejectsDuplicateEntries() throws IOException {
    byte[] npy = Npy.toBytes(NpyArray.ofInts(new int[] {1, 2}, 2));
    ByteArrayOutputStream out = new ByteArrayOutputStream();
    out.write(storedEntryDeclaring("a.npy", npy, npy.length));
    out.write(storedEntryDeclaring("a.npy", npy, npy.length));
    NpyFormatException e =
        assertThrows(NpyFormatException.class, () -> read(out.toByteArray(), NpyLimits.defaults()));
    assertTrue(e.getMessage().contains("duplicate"), e.getMessage());
  }
}
