package dev.heed.demo;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.attribute.FileTime;
import java.util.List;
import java.util.Locale;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The demo's cache files: contents that read back to the network, reuse, and regeneration. */
class DemoFilesTest {

  private static final long SEED = 11L;
  private static final int ACCOUNTS = 1_000;
  private static final int TRANSFERS = 4_000;

  @TempDir Path dir;

  private static DemoFiles prepare(Path directory) throws IOException {
    return DemoFiles.prepare(
        directory, PaymentsNetworkGenerator.of(ACCOUNTS, TRANSFERS, SEED), "test seed " + SEED);
  }

  @Test
  void filesHoldTheNetworkExactly() throws IOException {
    DemoFiles files = prepare(dir);
    assertTrue(files.generated());
    PaymentsNetwork network = PaymentsNetworkGenerator.of(ACCOUNTS, TRANSFERS, SEED).generate();

    List<String> transfers = Files.readAllLines(files.transfers(), StandardCharsets.UTF_8);
    assertEquals("source,target", transfers.get(0));
    assertEquals(TRANSFERS + 1, transfers.size());
    int[] sources = network.transferSources();
    int[] targets = network.transferTargets();
    for (int e = 0; e < TRANSFERS; e++) {
      assertEquals(
          network.accountId(sources[e]) + "," + network.accountId(targets[e]),
          transfers.get(e + 1),
          "transfer " + e);
    }

    List<String> features = Files.readAllLines(files.features(), StandardCharsets.UTF_8);
    assertEquals(
        "account," + String.join(",", PaymentsNetworkGenerator.FEATURE_NAMES), features.get(0));
    assertEquals(ACCOUNTS + 1, features.size());
    int f = PaymentsNetworkGenerator.FEATURE_NAMES.size();
    float[] expected = network.features();
    float[] read = new float[expected.length];
    for (int a = 0; a < ACCOUNTS; a++) {
      String[] fields = features.get(a + 1).split(",");
      assertEquals(network.accountId(a), fields[0]);
      assertEquals(f + 1, fields.length, "line " + (a + 2));
      for (int c = 0; c < f; c++) {
        read[a * f + c] = Float.parseFloat(fields[c + 1]);
      }
    }
    assertArrayEquals(expected, read, 0f, "features read back bit for bit");

    List<String> roles = Files.readAllLines(files.roles(), StandardCharsets.UTF_8);
    assertEquals("account,role,split", roles.get(0));
    int[] role = network.roles();
    PaymentsNetwork.Split[] split = network.splits();
    for (int a = 0; a < ACCOUNTS; a++) {
      assertEquals(
          network.accountId(a)
              + ","
              + PaymentsNetwork.ROLES.get(role[a])
              + ","
              + split[a].name().toLowerCase(Locale.ROOT),
          roles.get(a + 1));
    }
  }

  @Test
  void streamFileHoldsTheStreamExactly() throws IOException {
    DemoFiles files = prepare(dir);
    PaymentsNetwork network = PaymentsNetworkGenerator.of(ACCOUNTS, TRANSFERS, SEED).generate();
    PaymentsStream stream = PaymentsStream.generate(network, PaymentsStream.DEFAULT_SEED);
    List<String> lines = Files.readAllLines(files.stream(), StandardCharsets.UTF_8);
    assertEquals(
        "time,kind,source,target," + String.join(",", PaymentsNetworkGenerator.FEATURE_NAMES),
        lines.get(0));
    assertEquals(stream.events().size() + 1, lines.size());
    int f = PaymentsNetworkGenerator.FEATURE_NAMES.size();
    for (int i = 0; i < stream.events().size(); i++) {
      PaymentsStream.Event e = stream.events().get(i);
      String[] fields = lines.get(i + 1).split(",", -1);
      assertEquals(4 + f, fields.length, "line " + (i + 2));
      assertEquals(e.time(), Double.parseDouble(fields[0]), 5e-4, "line " + (i + 2));
      assertEquals(e.kind(), fields[1]);
      assertEquals(e.source(), fields[2]);
      assertEquals(e.target(), fields[3]);
      float[] x = e.features();
      for (int c = 0; c < f; c++) {
        assertEquals(x.length == 0 ? "" : Float.toString(x[c]), fields[4 + c]);
      }
    }
    List<String> accounts = Files.readAllLines(files.streamAccounts(), StandardCharsets.UTF_8);
    assertEquals("account,role,opened", accounts.get(0));
    assertEquals(PaymentsStream.RING_MEMBERS + PaymentsStream.NEW_CUSTOMERS + 1, accounts.size());
    long mules = accounts.stream().filter(l -> l.contains(",mule-ring,")).count();
    assertEquals(PaymentsStream.RING_MEMBERS, mules);
  }

  @Test
  void sameSettingsGiveTheSameBytesAndAreReused() throws IOException {
    DemoFiles first = prepare(dir.resolve("a"));
    DemoFiles other = prepare(dir.resolve("b"));
    for (String name :
        List.of(
            DemoFiles.TRANSFERS,
            DemoFiles.FEATURES,
            DemoFiles.ROLES,
            DemoFiles.STREAM,
            DemoFiles.STREAM_ACCOUNTS)) {
      assertArrayEquals(
          Files.readAllBytes(first.directory().resolve(name)),
          Files.readAllBytes(other.directory().resolve(name)),
          name);
    }
    var modified = Files.getLastModifiedTime(first.transfers());
    DemoFiles again = prepare(dir.resolve("a"));
    assertFalse(again.generated(), "intact files are reused");
    assertEquals(modified, Files.getLastModifiedTime(again.transfers()));
  }

  @Test
  void damagedOrMissingFilesAreRegenerated() throws IOException {
    DemoFiles files = prepare(dir);
    byte[] transfers = Files.readAllBytes(files.transfers());
    byte[] features = Files.readAllBytes(files.features());

    // Truncated.
    Files.write(files.transfers(), java.util.Arrays.copyOf(transfers, transfers.length / 2));
    DemoFiles again = prepare(dir);
    assertTrue(again.generated());
    assertArrayEquals(transfers, Files.readAllBytes(files.transfers()));

    // Same size, one byte changed.
    byte[] edited = features.clone();
    edited[edited.length / 2] = (byte) (edited[edited.length / 2] == '1' ? '2' : '1');
    Files.write(files.features(), edited);
    assertTrue(prepare(dir).generated());
    assertArrayEquals(features, Files.readAllBytes(files.features()));

    // Missing file, then missing manifest, then a manifest from other settings.
    Files.delete(files.roles());
    assertTrue(prepare(dir).generated());
    Files.delete(dir.resolve(DemoFiles.MANIFEST));
    assertTrue(prepare(dir).generated());
    assertTrue(
        DemoFiles.prepare(dir, PaymentsNetworkGenerator.of(ACCOUNTS, TRANSFERS, SEED), "other")
            .generated());
    assertFalse(
        DemoFiles.prepare(dir, PaymentsNetworkGenerator.of(ACCOUNTS, TRANSFERS, SEED), "other")
            .generated());

    try (var listing = Files.list(dir)) {
      assertEquals(
          List.of(
              DemoFiles.CHECKED,
              DemoFiles.FEATURES,
              DemoFiles.MANIFEST,
              DemoFiles.ROLES,
              DemoFiles.STREAM_ACCOUNTS,
              DemoFiles.STREAM,
              DemoFiles.TRANSFERS),
          listing.map(p -> p.getFileName().toString()).sorted().toList(),
          "no temporary files left behind");
    }
  }

  @Test
  void aCheckRecordsStampsThatSpareLaterChecksTheHashing() throws IOException {
    DemoFiles files = prepare(dir);
    byte[] features = Files.readAllBytes(files.features());
    FileTime hourAgo = FileTime.fromMillis(System.currentTimeMillis() - 3_600_000);
    try (var listing = Files.list(dir)) {
      for (Path file : listing.toList()) {
        Files.setLastModifiedTime(file, hourAgo);
      }
    }
    assertFalse(Files.exists(dir.resolve(DemoFiles.CHECKED)), "generating hashes nothing");
    assertFalse(prepare(dir).generated());
    assertTrue(Files.exists(dir.resolve(DemoFiles.CHECKED)), "a hashing check is recorded");

    // Same size and time as recorded: the quick check vouches for the file without hashing it.
    byte[] edited = features.clone();
    edited[edited.length / 2] = (byte) (edited[edited.length / 2] == '1' ? '2' : '1');
    Files.write(files.features(), edited);
    Files.setLastModifiedTime(files.features(), hourAgo);
    assertFalse(prepare(dir).generated());

    // Another time: hashed, found edited, regenerated.
    Files.setLastModifiedTime(files.features(), FileTime.fromMillis(hourAgo.toMillis() + 1_000));
    assertTrue(prepare(dir).generated());
    assertArrayEquals(features, Files.readAllBytes(files.features()));

    // Recorded moments before the check: not settled, so hashed again.
    assertFalse(prepare(dir).generated());
    Files.write(files.features(), edited);
    assertTrue(prepare(dir).generated(), "an edit right after a check is still seen");
  }

  @Test
  void defaultDirectoryIsUnderTheUsersCache() {
    assertEquals(
        Path.of(System.getProperty("user.home"), ".cache", "heed", DemoFiles.VERSION),
        DemoFiles.defaultDirectory());
  }
}
