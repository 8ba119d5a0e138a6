package dev.heed.demo;

import java.io.BufferedWriter;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.io.OutputStreamWriter;
import java.io.Writer;
import java.nio.charset.StandardCharsets;
import java.nio.file.AtomicMoveNotSupportedException;
import java.nio.file.Files;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.security.DigestOutputStream;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.util.ArrayList;
import java.util.HexFormat;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The demo's payments network as plain files in a cache directory, made on first use and checked on
 * every later use, so the command-line demo reads them through the same code path as any user's
 * files. All data is synthetic.
 *
 * <p>The files, UTF-8 CSV with a header line and {@code '\n'} line ends:
 *
 * <ul>
 *   <li>{@value #TRANSFERS} ({@code source,target}): one line per transfer, account ids such as
 *       {@code acct-000042}; money moves from source to target; repeats allowed;
 *   <li>{@value #FEATURES} ({@code account,} then {@link PaymentsNetworkGenerator#FEATURE_NAMES}):
 *       one line per account, the standardised features as float32 values written so that they read
 *       back exactly;
 *   <li>{@value #ROLES} ({@code account,role,split}): each account's role (one of {@link
 *       PaymentsNetwork#ROLES}) and its split ({@code train}, {@code validation}, {@code test});
 *   <li>{@value #STREAM} ({@code time,kind,source,target,} then the feature names): an invented
 *       hour of new activity ({@link PaymentsStream}) in the stream format of {@code heed replay}
 *       ({@code docs/stream-format.md}): transfers, a few recalled, new accounts with their
 *       features, and a new mule ring forming;
 *   <li>{@value #STREAM_ACCOUNTS} ({@code account,role,opened}): the role of each account the
 *       stream opens, and the second it opens at;
 *   <li>{@value #MANIFEST}: the version, the generator's settings and the size and SHA-256 of each
 *       file above, written last;
 *   <li>{@value #CHECKED}: written after a check that hashed the files: the size and modification
 *       time of the manifest and of each file at that check, and when it started.
 * </ul>
 *
 * <p>{@link #prepare(Path)} reuses the directory when the manifest matches the files; otherwise
 * (missing, truncated, edited, from another version) it generates the network again and rewrites
 * every file. Files are written under temporary names and moved into place, the manifest last, so
 * an interrupted run leaves no manifest that vouches for half-written files.
 *
 * <p>Cost: a file whose size and modification time are those {@value #CHECKED} recorded, from
 * before that check started by at least {@value #SETTLED_MILLIS} ms, is not hashed again (the quick
 * check of rsync and make: common practice; a change within one tick of the file system's clock
 * would otherwise go unseen, which the margin rules out); hashing the bundled files reads about 17
 * MB: in a fresh JVM about 40 ms more of the calling thread's CPU time than a check that hashes
 * nothing, and about twice its wall time (measured on 2 loaded cores). Generating the bundled
 * network takes a few seconds (O(n + T log n), see {@link PaymentsNetworkGenerator#generate()}).
 *
 * <p>Thread safety: immutable. Two processes preparing the same directory at once both write the
 * same bytes; each file is replaced atomically where the file system allows it.
 */
public final class DemoFiles {

  /** Version of the file set; also the default directory's name. */
  public static final String VERSION = "demo-v1";

  /** The transfers file name. */
  public static final String TRANSFERS = "transfers.csv";

  /** The features file name. */
  public static final String FEATURES = "features.csv";

  /** The roles-and-splits file name. */
  public static final String ROLES = "roles.csv";

  /** The stream file name. */
  public static final String STREAM = "stream.csv";

  /** The file naming the roles of the accounts the stream opens. */
  public static final String STREAM_ACCOUNTS = "stream-accounts.csv";

  /** The files the manifest vouches for, in the order written. */
  private static final List<String> DATA_FILES =
      List.of(TRANSFERS, FEATURES, ROLES, STREAM, STREAM_ACCOUNTS);

  /** The manifest file name. */
  public static final String MANIFEST = "manifest.txt";

  /** The file recording the sizes and modification times the last hashing check saw. */
  public static final String CHECKED = "checked.txt";

  /**
   * How much older than the check that recorded it a file's modification time must be for the
   * record to vouch for it.
   */
  static final long SETTLED_MILLIS = 2_000;

  private static final String CHECKED_FIRST_LINE = "heed demo files checked";

  private static final Logger LOG = LoggerFactory.getLogger(DemoFiles.class);
  private static final String MANIFEST_FIRST_LINE = "heed demo files " + VERSION;

  private final Path directory;
  private final boolean generated;

  private DemoFiles(Path directory, boolean generated) {
    this.directory = directory;
    this.generated = generated;
  }

  /**
   * Returns the default directory: {@code ~/.cache/heed/demo-v1} (from the {@code user.home} system
   * property).
   *
   * @return the path (not created)
   */
  public static Path defaultDirectory() {
    return Path.of(System.getProperty("user.home"), ".cache", "heed", VERSION);
  }

  /**
   * Makes sure {@code directory} holds the bundled demo's files ({@link
   * PaymentsNetworkGenerator#bundledDemo()}), generating them if they are missing or do not match
   * their manifest.
   *
   * @param directory the directory; created with its parents if needed
   * @return the files
   * @throws IOException if the directory or a file cannot be read or written
   */
  public static DemoFiles prepare(Path directory) throws IOException {
    return prepare(
        directory,
        PaymentsNetworkGenerator.bundledDemo(),
        "seed="
            + PaymentsNetworkGenerator.DEFAULT_SEED
            + " accounts="
            + PaymentsNetworkGenerator.DEFAULT_ACCOUNTS
            + " transfers="
            + PaymentsNetworkGenerator.DEFAULT_TRANSFERS
            + " stream-seed="
            + PaymentsStream.DEFAULT_SEED);
  }

  /** As {@link #prepare(Path)} with another generator (tests); {@code settings} names it. */
  static DemoFiles prepare(Path directory, PaymentsNetworkGenerator generator, String settings)
      throws IOException {
    Objects.requireNonNull(directory, "directory");
    Files.createDirectories(directory);
    String header = MANIFEST_FIRST_LINE + "\ngenerator " + settings + "\n";
    if (matchesManifest(directory, header)) {
      return new DemoFiles(directory, false);
    }
    LOG.info("generating the demo files in {}", directory);
    PaymentsNetwork network = generator.generate();
    write(
        directory, network, PaymentsStream.generate(network, PaymentsStream.DEFAULT_SEED), header);
    return new DemoFiles(directory, true);
  }

  /**
   * Returns the directory.
   *
   * @return the directory holding the files
   */
  public Path directory() {
    return directory;
  }

  /**
   * Returns the transfers file.
   *
   * @return {@code directory/transfers.csv}
   */
  public Path transfers() {
    return directory.resolve(TRANSFERS);
  }

  /**
   * Returns the features file.
   *
   * @return {@code directory/features.csv}
   */
  public Path features() {
    return directory.resolve(FEATURES);
  }

  /**
   * Returns the roles-and-splits file.
   *
   * @return {@code directory/roles.csv}
   */
  public Path roles() {
    return directory.resolve(ROLES);
  }

  /**
   * Returns the stream file.
   *
   * @return {@code directory/stream.csv}
   */
  public Path stream() {
    return directory.resolve(STREAM);
  }

  /**
   * Returns the file with the roles of the accounts the stream opens.
   *
   * @return {@code directory/stream-accounts.csv}
   */
  public Path streamAccounts() {
    return directory.resolve(STREAM_ACCOUNTS);
  }

  /**
   * Returns whether {@link #prepare} generated the files in this call (rather than reusing them).
   *
   * @return true if they were (re)generated
   */
  public boolean generated() {
    return generated;
  }

  private static boolean matchesManifest(Path directory, String header) throws IOException {
    String manifest;
    try {
      manifest = Files.readString(directory.resolve(MANIFEST), StandardCharsets.UTF_8);
    } catch (NoSuchFileException e) {
      return false;
    } catch (java.nio.charset.MalformedInputException e) {
      LOG.warn("{} is not valid UTF-8; regenerating the demo files", directory.resolve(MANIFEST));
      return false;
    }
    if (!manifest.startsWith(header)) {
      LOG.warn(
          "{} is from another version or other settings; regenerating the demo files",
          directory.resolve(MANIFEST));
      return false;
    }
    String[] lines = manifest.substring(header.length()).split("\n");
    if (lines.length != DATA_FILES.size()) {
      return false;
    }
    long started = System.currentTimeMillis();
    Map<String, String> checked = readChecked(directory);
    boolean hashed = false;
    for (String line : lines) {
      String[] f = line.split(" ");
      if (f.length != 4 || !f[0].equals("sha256") || !f[3].matches("[0-9]{1,18}")) {
        return false;
      }
      Path file = directory.resolve(f[1]);
      if (!Files.isRegularFile(file) || Files.size(file) != Long.parseLong(f[3])) {
        LOG.warn("{} is missing or has the wrong size; regenerating the demo files", file);
        return false;
      }
      if (vouchedFor(checked, directory, f[1])) {
        continue;
      }
      hashed = true;
      if (!sha256(file).equals(f[2])) {
        LOG.warn("{} does not match its checksum; regenerating the demo files", file);
        return false;
      }
    }
    if (hashed) {
      writeChecked(directory, started);
    }
    return true;
  }

  /** The size and modification time of a file, as {@value #CHECKED} records them. */
  private static String stamp(Path file) throws IOException {
    return Files.size(file) + " " + Files.getLastModifiedTime(file).toMillis();
  }

  /**
   * {@value #CHECKED} as a map from file name to its stamp, "at" to the check's start; empty when
   * missing or unreadable, or when the manifest has changed since.
   */
  private static Map<String, String> readChecked(Path directory) throws IOException {
    List<String> lines;
    try {
      lines = Files.readAllLines(directory.resolve(CHECKED), StandardCharsets.UTF_8);
    } catch (IOException e) {
      return Map.of();
    }
    if (lines.isEmpty() || !lines.get(0).equals(CHECKED_FIRST_LINE)) {
      return Map.of();
    }
    Map<String, String> checked = new LinkedHashMap<>();
    for (String line : lines.subList(1, lines.size())) {
      int space = line.indexOf(' ');
      if (space > 0) {
        checked.put(line.substring(0, space), line.substring(space + 1));
      }
    }
    String manifest = checked.get(MANIFEST);
    return manifest != null && manifest.equals(stamp(directory.resolve(MANIFEST)))
        ? checked
        : Map.of();
  }

  /** Whether {@value #CHECKED} vouches for the file: same stamp, settled before that check. */
  private static boolean vouchedFor(Map<String, String> checked, Path directory, String name)
      throws IOException {
    String recorded = checked.get(name);
    String at = checked.get("at");
    if (recorded == null || at == null || !recorded.equals(stamp(directory.resolve(name)))) {
      return false;
    }
    try {
      long modified = Long.parseLong(recorded.substring(recorded.indexOf(' ') + 1));
      return modified < Long.parseLong(at) - SETTLED_MILLIS;
    } catch (NumberFormatException e) {
      return false;
    }
  }

  /**
   * Records the stamps of the manifest and the files after a check that started at {@code started};
   * a directory that cannot be written only means the next check hashes again.
   */
  private static void writeChecked(Path directory, long started) {
    StringBuilder text = new StringBuilder(CHECKED_FIRST_LINE).append('\n');
    Path tmp = null;
    try {
      text.append("at ").append(started).append('\n');
      text.append(MANIFEST).append(' ').append(stamp(directory.resolve(MANIFEST))).append('\n');
      for (String name : DATA_FILES) {
        text.append(name).append(' ').append(stamp(directory.resolve(name))).append('\n');
      }
      tmp = Files.createTempFile(directory, "." + CHECKED + "-", ".tmp");
      Files.writeString(tmp, text, StandardCharsets.UTF_8);
      move(tmp, directory.resolve(CHECKED));
    } catch (IOException e) {
      LOG.debug("cannot record the check of the demo files in {}: {}", directory, e.toString());
    } finally {
      if (tmp != null) {
        try {
          Files.deleteIfExists(tmp);
        } catch (IOException e) {
          LOG.debug("cannot delete {}: {}", tmp, e.toString());
        }
      }
    }
  }

  private static void write(
      Path directory, PaymentsNetwork network, PaymentsStream stream, String header)
      throws IOException {
    Map<String, String> digests = new LinkedHashMap<>();
    Map<String, Long> sizes = new LinkedHashMap<>();
    List<Path> temporary = new ArrayList<>();
    try {
      for (String name : DATA_FILES) {
        Path tmp = Files.createTempFile(directory, "." + name + "-", ".tmp");
        temporary.add(tmp);
        MessageDigest digest = newDigest();
        try (OutputStream raw = Files.newOutputStream(tmp);
            DigestOutputStream hashed = new DigestOutputStream(raw, digest);
            Writer out =
                new BufferedWriter(
                    new OutputStreamWriter(hashed, StandardCharsets.UTF_8), 1 << 16)) {
          switch (name) {
            case TRANSFERS -> writeTransfers(network, out);
            case FEATURES -> writeFeatures(network, out);
            case ROLES -> writeRoles(network, out);
            case STREAM -> writeStream(network, stream, out);
            default -> writeStreamAccounts(stream, out);
          }
        }
        digests.put(name, HexFormat.of().formatHex(digest.digest()));
        sizes.put(name, Files.size(tmp));
      }
      for (int i = 0; i < temporary.size(); i++) {
        move(temporary.get(i), directory.resolve(DATA_FILES.get(i)));
      }
      StringBuilder manifest = new StringBuilder(header);
      for (Map.Entry<String, String> e : digests.entrySet()) {
        manifest
            .append("sha256 ")
            .append(e.getKey())
            .append(' ')
            .append(e.getValue())
            .append(' ')
            .append(sizes.get(e.getKey()))
            .append('\n');
      }
      Path tmp = Files.createTempFile(directory, "." + MANIFEST + "-", ".tmp");
      temporary.add(tmp);
      Files.writeString(tmp, manifest, StandardCharsets.UTF_8);
      move(tmp, directory.resolve(MANIFEST));
    } finally {
      for (Path tmp : temporary) {
        Files.deleteIfExists(tmp);
      }
    }
  }

  private static void move(Path from, Path to) throws IOException {
    try {
      Files.move(from, to, StandardCopyOption.ATOMIC_MOVE, StandardCopyOption.REPLACE_EXISTING);
    } catch (AtomicMoveNotSupportedException e) {
      Files.move(from, to, StandardCopyOption.REPLACE_EXISTING);
    }
  }

  private static void writeTransfers(PaymentsNetwork network, Writer out) throws IOException {
    int[] sources = network.transferSources();
    int[] targets = network.transferTargets();
    out.write("source,target\n");
    for (int e = 0; e < sources.length; e++) {
      out.write(network.accountId(sources[e]));
      out.write(',');
      out.write(network.accountId(targets[e]));
      out.write('\n');
    }
  }

  private static void writeFeatures(PaymentsNetwork network, Writer out) throws IOException {
    List<String> names = network.featureNames();
    float[] x = network.features();
    int f = names.size();
    out.write("account," + String.join(",", names) + "\n");
    for (int a = 0; a < network.accountCount(); a++) {
      out.write(network.accountId(a));
      for (int c = 0; c < f; c++) {
        out.write(',');
        // Float.toString gives a decimal that parses back to exactly this float32.
        out.write(Float.toString(x[a * f + c]));
      }
      out.write('\n');
    }
  }

  private static void writeRoles(PaymentsNetwork network, Writer out) throws IOException {
    int[] roles = network.roles();
    PaymentsNetwork.Split[] splits = network.splits();
    out.write("account,role,split\n");
    for (int a = 0; a < network.accountCount(); a++) {
      out.write(network.accountId(a));
      out.write(',');
      out.write(PaymentsNetwork.ROLES.get(roles[a]));
      out.write(',');
      out.write(splits[a].name().toLowerCase(java.util.Locale.ROOT));
      out.write('\n');
    }
  }

  private static void writeStream(PaymentsNetwork network, PaymentsStream stream, Writer out)
      throws IOException {
    out.write("time,kind,source,target," + String.join(",", network.featureNames()) + "\n");
    String noFeatures = ",".repeat(network.featureNames().size());
    for (PaymentsStream.Event e : stream.events()) {
      out.write(String.format(java.util.Locale.ROOT, "%.3f", e.time()));
      out.write(',');
      out.write(e.kind());
      out.write(',');
      out.write(e.source());
      out.write(',');
      out.write(e.target());
      float[] x = e.features();
      if (x.length == 0) {
        out.write(noFeatures);
      } else {
        for (float v : x) {
          out.write(',');
          out.write(Float.toString(v));
        }
      }
      out.write('\n');
    }
  }

  private static void writeStreamAccounts(PaymentsStream stream, Writer out) throws IOException {
    out.write("account,role,opened\n");
    for (PaymentsStream.Event e : stream.events()) {
      if (e.kind().equals(PaymentsStream.ADD_NODE)) {
        String role = stream.ringAccounts().contains(e.source()) ? "mule-ring" : "ordinary";
        out.write(
            e.source() + "," + role + "," + String.format(java.util.Locale.ROOT, "%.3f", e.time()));
        out.write('\n');
      }
    }
  }

  private static String sha256(Path file) throws IOException {
    MessageDigest digest = newDigest();
    byte[] buffer = new byte[1 << 16];
    try (InputStream in = Files.newInputStream(file)) {
      for (int r = in.read(buffer); r >= 0; r = in.read(buffer)) {
        digest.update(buffer, 0, r);
      }
    }
    return HexFormat.of().formatHex(digest.digest());
  }

  private static MessageDigest newDigest() {
    try {
      return MessageDigest.getInstance("SHA-256");
    } catch (NoSuchAlgorithmException e) {
      throw new IllegalStateException("SHA-256 is required of every Java platform", e);
    }
  }

  @Override
  public String toString() {
    return "DemoFiles[" + directory + (generated ? ", generated" : ", reused") + "]";
  }
}
