package dev.heed.attention;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.SerializationFeature;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.internal.CostRegime;
import dev.heed.attention.internal.CostRegime.CallSize;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.EnumMap;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Set;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * A cost model of the two attention paths, calibrated on one machine: predicts the seconds one
 * attention call takes on the dense and on the sparse path from its size (n, entries E, heads H,
 * key width dk, value width dv, complete pattern or CSR, threads), so that {@code PathChoice.AUTO}
 * can take the faster path for each layer of each call.
 *
 * <p><b>Model.</b> Each path runs a call in one of a few regimes (the dense kernel; the sparse
 * kernel's per-head path, one regime per score function; its all-heads path in place or over the
 * packed node table). A regime's time is a sum of coefficient × work term, for example the sparse
 * per-head path's {@code fixed + row·n + entry·E·H + entry_width·E·H·(dk + dv)}; terms that run on
 * the kernel's Java threads are divided by the speed-up {@code 1 + e·(t − 1)} of the t threads the
 * call uses. Coefficients are seconds per unit of work on one thread; the terms of every regime are
 * listed in {@code docs/path-costs.md}. A faster kernel changes coefficients, not this class:
 * recalibrate.
 *
 * <p><b>Profiles.</b> {@link PathCalibration} fits the coefficients on the machine it runs on (a
 * few seconds) and {@link #write} saves them as a small versioned JSON file ({@value #FORMAT},
 * version {@value #VERSION}; format in {@code docs/path-costs.md}). {@link #current()} is the
 * profile models use unless given one: the file named by the system property {@value
 * #LOCATION_PROPERTY}, else {@link #defaultLocation()} if that file exists, else {@link #builtIn()}
 * (the reference machine's, with one INFO line saying how to calibrate). A file named explicitly
 * (the property, {@link #read}, the command line) that is missing, malformed or of another format
 * is an error; a bad file at the default location gets one WARN line and the built-in profile, so
 * that a stale file cannot stop a service.
 *
 * <p>Cost: a prediction is a few dozen flops.
 *
 * <p>Thread safety: immutable.
 */
public final class PathCosts {

  /** The {@code format} value of every profile file: {@value}. */
  public static final String FORMAT = "heed-path-costs";

  /** The profile format version this class writes and reads: {@value}. */
  public static final int VERSION = 1;

  /** System property naming the profile file {@link #current()} reads: {@value}. */
  public static final String LOCATION_PROPERTY = "heed.path.costs";

  /** The {@link #source()} of {@link #builtIn()}. */
  public static final String BUILT_IN_SOURCE = "built-in (reference machine)";

  private static final Logger LOG = LoggerFactory.getLogger(PathCosts.class);
  private static final ObjectMapper JSON =
      new ObjectMapper().enable(SerializationFeature.INDENT_OUTPUT);
  private static final String BUILT_IN_RESOURCE = "builtin-path-costs.json";
  private static final Set<String> TOP_KEYS =
      Set.of(
          "format",
          "version",
          "machine",
          "calibrated_at",
          "threads",
          "parallel_efficiency",
          "fit",
          "regimes",
          "note");

  private final Map<CostRegime, double[]> coefficients;
  private final int threads;
  private final double parallelEfficiency;
  private final String machine;
  private final String calibratedAt;
  private final Fit fit;
  private final String source;

  PathCosts(
      Map<CostRegime, double[]> coefficients,
      int threads,
      double parallelEfficiency,
      String machine,
      String calibratedAt,
      Fit fit,
      String source) {
    EnumMap<CostRegime, double[]> copy = new EnumMap<>(CostRegime.class);
    for (CostRegime r : CostRegime.values()) {
      double[] c = coefficients.get(r);
      if (c == null || c.length != r.terms().size()) {
        throw new IllegalArgumentException(
            "regime " + r.key() + " needs " + r.terms().size() + " coefficients " + r.terms());
      }
      for (int i = 0; i < c.length; i++) {
        if (!(c[i] >= 0 && c[i] < Double.POSITIVE_INFINITY)) {
          throw new IllegalArgumentException(
              "coefficient "
                  + r.key()
                  + "."
                  + r.terms().get(i)
                  + " must be finite and >= 0, got "
                  + c[i]);
        }
      }
      copy.put(r, c.clone());
    }
    if (threads < 1) {
      throw new IllegalArgumentException("threads must be at least 1, got " + threads);
    }
    if (!(parallelEfficiency >= 0 && parallelEfficiency <= 1)) {
      throw new IllegalArgumentException(
          "parallel_efficiency must be in [0, 1], got " + parallelEfficiency);
    }
    this.coefficients = copy;
    this.threads = threads;
    this.parallelEfficiency = parallelEfficiency;
    this.machine = Objects.requireNonNull(machine, "machine");
    this.calibratedAt = Objects.requireNonNull(calibratedAt, "calibratedAt");
    this.fit = fit;
    this.source = Objects.requireNonNull(source, "source");
  }

  // ---------------------------------------------------------------------------------------------
  // Predictions

  /**
   * Predicts one attention call on both paths.
   *
   * @param pattern the pattern (not modified)
   * @param score the score function
   * @param shape heads and widths
   * @param threads the threads the kernels may use ({@code KernelOptions.threads()}), at least 1
   * @return the prediction and the faster path
   * @throws NullPointerException if an argument is null
   * @throws IllegalArgumentException if {@code threads < 1}
   */
  public PathEstimate estimate(
      AttentionPattern pattern, ScoreFunction score, HeadShape shape, int threads) {
    Objects.requireNonNull(pattern, "pattern");
    return estimate(
        pattern.nodeCount(),
        pattern.entryCount(),
        pattern instanceof CompletePattern,
        score,
        shape,
        threads);
  }

  /**
   * Predicts one attention call of a given size on both paths, without a pattern at hand.
   *
   * @param nodes n, at least 0
   * @param entries E, at least 0 (n² for the complete pattern)
   * @param complete whether the pattern is the complete one
   * @param score the score function
   * @param shape heads and widths
   * @param threads at least 1
   * @return the prediction and the faster path
   * @throws IllegalArgumentException if a count is negative or {@code threads < 1}
   */
  public PathEstimate estimate(
      int nodes,
      long entries,
      boolean complete,
      ScoreFunction score,
      HeadShape shape,
      int threads) {
    CallSize size = new CallSize(nodes, entries, complete, score, shape, threads);
    return new PathEstimate(seconds(ComputePath.DENSE, size), seconds(ComputePath.SPARSE, size));
  }

  double seconds(ComputePath path, CallSize size) {
    CostRegime regime = CostRegime.of(path, size);
    double[] f = regime.features(size, parallelEfficiency);
    double[] c = coefficients.get(regime);
    double t = 0;
    for (int i = 0; i < f.length; i++) {
      t += f[i] * c[i];
    }
    return t;
  }

  /**
   * Returns the density of a CSR pattern at which the two paths are predicted equally fast, for n
   * nodes with E = density·n² entries: below it the sparse path is predicted faster.
   *
   * @param nodes n, at least 1
   * @param score the score function
   * @param shape heads and widths
   * @param threads at least 1
   * @return the density in {@code [1/n, 1]}; 1 when sparse is predicted faster at every density,
   *     {@code 1/n} (one entry per row) when dense is predicted faster already there
   */
  public double crossoverDensity(int nodes, ScoreFunction score, HeadShape shape, int threads) {
    if (nodes < 1) {
      throw new IllegalArgumentException("nodes must be at least 1, got " + nodes);
    }
    double n2 = (double) nodes * nodes;
    double lo = Math.log(1.0 / nodes);
    double hi = 0;
    if (sparseMinusDense(nodes, Math.exp(hi), score, shape, threads) <= 0) {
      return 1.0;
    }
    if (sparseMinusDense(nodes, Math.exp(lo), score, shape, threads) >= 0) {
      return Math.exp(lo);
    }
    for (int i = 0; i < 60; i++) {
      double mid = (lo + hi) / 2;
      if (sparseMinusDense(nodes, Math.exp(mid), score, shape, threads) < 0) {
        lo = mid;
      } else {
        hi = mid;
      }
    }
    assert n2 > 0;
    return Math.exp((lo + hi) / 2);
  }

  private double sparseMinusDense(
      int nodes, double density, ScoreFunction score, HeadShape shape, int threads) {
    long entries = Math.round(density * nodes * (double) nodes);
    PathEstimate e = estimate(nodes, entries, false, score, shape, threads);
    return e.sparseSeconds() - e.denseSeconds();
  }

  // ---------------------------------------------------------------------------------------------
  // Properties

  /**
   * Returns where this profile came from: a file path, or {@link #BUILT_IN_SOURCE}, or {@code
   * "calibration"} for one not yet saved.
   *
   * @return the source
   */
  public String source() {
    return source;
  }

  /**
   * Returns the thread count the profile was calibrated with.
   *
   * @return at least 1
   */
  public int threads() {
    return threads;
  }

  /**
   * Returns the parallel efficiency e: t threads are assumed {@code 1 + e·(t − 1)} times as fast as
   * one on the parallel terms.
   *
   * @return e in {@code [0, 1]}
   */
  public double parallelEfficiency() {
    return parallelEfficiency;
  }

  /**
   * Returns the description of the machine the profile was calibrated on (CPU, processors, OS,
   * JDK), as recorded in the file.
   *
   * @return the description, possibly empty
   */
  public String machine() {
    return machine;
  }

  /**
   * Returns when the profile was calibrated, as an ISO-8601 instant.
   *
   * @return the instant, possibly empty
   */
  public String calibratedAt() {
    return calibratedAt;
  }

  /**
   * Returns how well the coefficients fit the calibration's measurements: median relative error,
   * number of points and calibration seconds; NaN where not recorded.
   *
   * @return the median relative error of the fitted predictions against the measured times
   */
  public double fitMedianRelativeError() {
    return fit == null ? Double.NaN : fit.medianRelativeError();
  }

  /**
   * Returns how long the calibration that made this profile took.
   *
   * @return seconds, or NaN if not recorded
   */
  public double calibrationSeconds() {
    return fit == null ? Double.NaN : fit.seconds();
  }

  /**
   * Returns the coefficients of every regime, by regime name and term name (as in the file).
   *
   * @return an unmodifiable map, in a fixed order
   */
  public Map<String, Map<String, Double>> coefficients() {
    Map<String, Map<String, Double>> all = new java.util.LinkedHashMap<>();
    for (Map.Entry<CostRegime, double[]> e : coefficients.entrySet()) {
      Map<String, Double> terms = new java.util.LinkedHashMap<>();
      for (int i = 0; i < e.getValue().length; i++) {
        terms.put(e.getKey().terms().get(i), e.getValue()[i]);
      }
      all.put(e.getKey().key(), java.util.Collections.unmodifiableMap(terms));
    }
    return java.util.Collections.unmodifiableMap(all);
  }

  double[] coefficients(CostRegime regime) {
    return coefficients.get(regime).clone();
  }

  /** A one-line description: source, machine, threads, date. */
  @Override
  public String toString() {
    return "path costs from "
        + source
        + (machine.isEmpty() ? "" : " (" + machine + ")")
        + ", "
        + threads
        + (threads == 1 ? " thread" : " threads")
        + (calibratedAt.isEmpty() ? "" : ", calibrated " + calibratedAt);
  }

  // ---------------------------------------------------------------------------------------------
  // Profiles

  /**
   * Returns the profile measured on the reference machine (2 cores; see {@code
   * benchmarks/RESULTS.md}), used when no profile was calibrated on this one.
   *
   * @return the built-in profile
   */
  public static PathCosts builtIn() {
    return BuiltIn.PROFILE;
  }

  /**
   * Returns the default profile location: {@code ~/.heed/path-costs.json} (the user's home from
   * {@code user.home}).
   *
   * @return the path (the file may not exist)
   */
  public static Path defaultLocation() {
    return Path.of(System.getProperty("user.home"), ".heed", "path-costs.json");
  }

  /**
   * Returns the profile models use when none is given, resolved once per JVM: the file named by
   * {@value #LOCATION_PROPERTY}; else the file at {@link #defaultLocation()} if it exists (a bad
   * one: a warning and the built-in profile); else {@link #builtIn()}, with one INFO line saying
   * how to calibrate.
   *
   * @return the profile
   * @throws UncheckedIOException if the file named by {@value #LOCATION_PROPERTY} cannot be read or
   *     is not a valid profile (the cause says what, where and how to fix it)
   */
  public static PathCosts current() {
    return Current.PROFILE;
  }

  /**
   * Reads a profile file written by {@link #write} (or by hand, in the documented format).
   *
   * @param file the file
   * @return the profile, whose {@link #source()} is the file
   * @throws NoSuchFileException if the file does not exist
   * @throws PathCostsFormatException if it is not JSON, is another format or a newer version, or a
   *     value is missing or out of range; the message names the file and the field
   * @throws IOException if it cannot be read
   */
  public static PathCosts read(Path file) throws IOException {
    Objects.requireNonNull(file, "file");
    byte[] bytes = Files.readAllBytes(file);
    return parse(bytes, file.toString());
  }

  /**
   * Writes this profile as JSON, creating parent folders as needed.
   *
   * @param file the file (replaced if it exists)
   * @throws IOException if it cannot be written
   */
  public void write(Path file) throws IOException {
    Path parent = file.toAbsolutePath().getParent();
    if (parent != null) {
      Files.createDirectories(parent);
    }
    Files.write(file, toJson().getBytes(java.nio.charset.StandardCharsets.UTF_8));
  }

  /**
   * Returns the profile as the JSON text {@link #write} saves.
   *
   * @return the JSON document
   */
  public String toJson() {
    ObjectNode root = JSON.createObjectNode();
    root.put("format", FORMAT);
    root.put("version", VERSION);
    root.put("machine", machine);
    root.put("calibrated_at", calibratedAt);
    root.put("threads", threads);
    root.put("parallel_efficiency", parallelEfficiency);
    if (fit != null) {
      ObjectNode f = root.putObject("fit");
      f.put("points", fit.points());
      f.put("median_relative_error", fit.medianRelativeError());
      f.put("seconds", fit.seconds());
    }
    ObjectNode regimes = root.putObject("regimes");
    for (Map.Entry<CostRegime, double[]> e : coefficients.entrySet()) {
      ObjectNode r = regimes.putObject(e.getKey().key());
      for (int i = 0; i < e.getValue().length; i++) {
        r.put(e.getKey().terms().get(i), e.getValue()[i]);
      }
    }
    try {
      return JSON.writeValueAsString(root) + "\n";
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** Returns a copy with another source (the file it was saved to). */
  PathCosts withSource(String newSource) {
    return new PathCosts(
        coefficients, threads, parallelEfficiency, machine, calibratedAt, fit, newSource);
  }

  static PathCosts parse(byte[] bytes, String where) throws PathCostsFormatException {
    JsonNode root;
    try {
      root = JSON.readTree(bytes);
    } catch (IOException e) {
      throw new PathCostsFormatException(
          where
              + ": not a JSON document ("
              + e.getMessage().lines().findFirst().orElse("")
              + "); "
              + HOW_TO_FIX,
          e);
    }
    if (root == null || !root.isObject()) {
      throw new PathCostsFormatException(
          where + ": expected a JSON object with \"format\": \"" + FORMAT + "\"; " + HOW_TO_FIX);
    }
    JsonNode format = root.get("format");
    if (format == null || !FORMAT.equals(format.asText(null))) {
      throw new PathCostsFormatException(
          where
              + ": not a Heed path-cost profile (\"format\" is "
              + (format == null ? "missing" : format.toString())
              + ", expected \""
              + FORMAT
              + "\"); "
              + HOW_TO_FIX);
    }
    int version = intField(root, "version", where);
    if (version > VERSION) {
      throw new PathCostsFormatException(
          where
              + ": profile version "
              + version
              + " was written by a newer Heed; this one reads version "
              + VERSION
              + ". "
              + HOW_TO_FIX);
    }
    if (version < 1) {
      throw new PathCostsFormatException(
          where + ": \"version\" must be at least 1, got " + version + "; " + HOW_TO_FIX);
    }
    for (Iterator<String> it = root.fieldNames(); it.hasNext(); ) {
      String key = it.next();
      if (!TOP_KEYS.contains(key)) {
        throw new PathCostsFormatException(
            where + ": unknown field \"" + key + "\" (known: " + sorted(TOP_KEYS) + ")");
      }
    }
    int threads = intField(root, "threads", where);
    if (threads < 1) {
      throw new PathCostsFormatException(
          where + ": \"threads\" must be at least 1, got " + threads);
    }
    double efficiency = numberField(root, "parallel_efficiency", where, "parallel_efficiency");
    if (efficiency > 1) {
      throw new PathCostsFormatException(
          where + ": \"parallel_efficiency\" must be in [0, 1], got " + efficiency);
    }
    Fit fit = null;
    JsonNode f = root.get("fit");
    if (f != null) {
      if (!f.isObject()) {
        throw new PathCostsFormatException(where + ": \"fit\" must be an object");
      }
      fit =
          new Fit(
              intField(f, "points", where + ": fit"),
              numberField(f, "median_relative_error", where, "fit.median_relative_error"),
              numberField(f, "seconds", where, "fit.seconds"));
    }
    JsonNode regimes = root.get("regimes");
    if (regimes == null || !regimes.isObject()) {
      throw new PathCostsFormatException(where + ": \"regimes\" must be an object of regimes");
    }
    Map<CostRegime, double[]> coefficients = new EnumMap<>(CostRegime.class);
    for (Iterator<String> it = regimes.fieldNames(); it.hasNext(); ) {
      String key = it.next();
      CostRegime regime = CostRegime.byKey(key);
      if (regime == null) {
        throw new PathCostsFormatException(
            where + ": unknown regime \"" + key + "\" (known: " + regimeKeys() + ")");
      }
      JsonNode r = regimes.get(key);
      if (!r.isObject()) {
        throw new PathCostsFormatException(where + ": regime \"" + key + "\" must be an object");
      }
      double[] c = new double[regime.terms().size()];
      for (Iterator<String> terms = r.fieldNames(); terms.hasNext(); ) {
        String term = terms.next();
        if (!regime.terms().contains(term)) {
          throw new PathCostsFormatException(
              where
                  + ": regime \""
                  + key
                  + "\" has no term \""
                  + term
                  + "\" (its terms: "
                  + regime.terms()
                  + ")");
        }
      }
      for (int i = 0; i < c.length; i++) {
        String term = regime.terms().get(i);
        String older = OLDER_TERMS.get(term);
        if (older != null && !r.has(term) && r.has(older)) {
          // a profile written before this term existed priced its work with the older term:
          // keep that reading
          c[i] = numberField(r, older, where, "regimes." + key + "." + older);
          continue;
        }
        if (!r.has(term) && ZERO_IF_ABSENT.contains(term)) {
          // a profile written before this term existed did not price its work apart
          c[i] = 0;
          continue;
        }
        c[i] = numberField(r, term, where, "regimes." + key + "." + term);
      }
      coefficients.put(regime, c);
    }
    List<String> missing = new ArrayList<>();
    for (CostRegime r : CostRegime.values()) {
      if (!coefficients.containsKey(r)) {
        missing.add(r.key());
      }
    }
    if (!missing.isEmpty()) {
      throw new PathCostsFormatException(
          where + ": regimes missing: " + missing + "; " + HOW_TO_FIX);
    }
    return new PathCosts(
        coefficients,
        threads,
        efficiency,
        textField(root, "machine"),
        textField(root, "calibrated_at"),
        fit,
        where);
  }

  /**
   * Terms added to a regime after profiles were written, each with the older term whose coefficient
   * priced its work before: a profile without the newer term reads the older one.
   */
  private static final Map<String, String> OLDER_TERMS =
      Map.of(
          CostRegime.COMPLETE_ENTRY_WIDTH, CostRegime.ENTRY_WIDTH,
          CostRegime.WHOLE_ROW_ENTRY_WIDTH, CostRegime.ENTRY_WIDTH,
          CostRegime.SMALL_PRODUCT, CostRegime.PRODUCT,
          CostRegime.SPLIT_PRODUCT, CostRegime.PRODUCT);

  /** Terms added to regimes after profiles were written that such profiles read as 0. */
  private static final java.util.Set<String> ZERO_IF_ABSENT =
      java.util.Set.of(CostRegime.FAR_ENTRY_WIDTH);

  private static final String HOW_TO_FIX =
      "recalibrate with `heed calibrate` (or PathCalibration.run) to write a valid profile";

  private static int intField(JsonNode node, String field, String where)
      throws PathCostsFormatException {
    JsonNode v = node.get(field);
    if (v == null || !v.canConvertToInt() || !v.isIntegralNumber()) {
      throw new PathCostsFormatException(
          where + ": \"" + field + "\" must be an integer, got " + (v == null ? "nothing" : v));
    }
    return v.intValue();
  }

  private static double numberField(JsonNode node, String field, String where, String name)
      throws PathCostsFormatException {
    JsonNode v = node.get(field);
    if (v == null
        || !v.isNumber()
        || !(v.doubleValue() >= 0)
        || v.doubleValue() == Double.POSITIVE_INFINITY) {
      throw new PathCostsFormatException(
          where
              + ": \""
              + name
              + "\" must be a finite number >= 0, got "
              + (v == null ? "nothing" : v));
    }
    return v.doubleValue();
  }

  private static String textField(JsonNode node, String field) {
    JsonNode v = node.get(field);
    return v == null || v.isNull() ? "" : v.asText();
  }

  private static String sorted(Set<String> keys) {
    String[] a = keys.toArray(new String[0]);
    Arrays.sort(a);
    return String.join(", ", a);
  }

  private static String regimeKeys() {
    List<String> keys = new ArrayList<>();
    for (CostRegime r : CostRegime.values()) {
      keys.add(r.key());
    }
    return String.join(", ", keys);
  }

  /** Fit summary of a calibration. */
  record Fit(int points, double medianRelativeError, double seconds) {}

  private static final class BuiltIn {
    static final PathCosts PROFILE = load();

    private static PathCosts load() {
      try (InputStream in = PathCosts.class.getResourceAsStream(BUILT_IN_RESOURCE)) {
        if (in == null) {
          throw new IllegalStateException("resource " + BUILT_IN_RESOURCE + " is missing");
        }
        return parse(in.readAllBytes(), BUILT_IN_RESOURCE).withSource(BUILT_IN_SOURCE);
      } catch (IOException e) {
        throw new IllegalStateException("the built-in path costs cannot be read", e);
      }
    }
  }

  private static final class Current {
    static final PathCosts PROFILE = resolve();
  }

  /**
   * The resolution of {@link #current()}, with the property value and default location as arguments
   * (tests).
   */
  static PathCosts resolve(String property, Path defaultFile) {
    if (property != null && !property.isBlank()) {
      try {
        PathCosts p = read(Path.of(property));
        LOG.info("path costs from {} ({})", property, p);
        return p;
      } catch (NoSuchFileException e) {
        throw new UncheckedIOException(
            new NoSuchFileException(
                property,
                null,
                "no path-cost profile at the file -D"
                    + LOCATION_PROPERTY
                    + " names; "
                    + HOW_TO_FIX));
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    }
    if (defaultFile != null && Files.isRegularFile(defaultFile)) {
      try {
        PathCosts p = read(defaultFile);
        LOG.debug("path costs from {}", p);
        return p;
      } catch (IOException e) {
        LOG.warn(
            "ignoring the path-cost profile {}: {}; using the built-in reference-machine costs",
            defaultFile,
            e.getMessage());
        return builtIn();
      }
    }
    LOG.info(
        "PathChoice.AUTO uses the reference machine's path costs; run `heed calibrate` (or"
            + " PathCalibration.run) once to fit them to this machine ({} or -D{}=FILE)",
        defaultFile,
        LOCATION_PROPERTY);
    return builtIn();
  }

  private static PathCosts resolve() {
    return resolve(System.getProperty(LOCATION_PROPERTY), defaultLocation());
  }
}
