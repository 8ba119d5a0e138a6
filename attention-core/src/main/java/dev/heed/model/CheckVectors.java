package dev.heed.model;

import dev.heed.attention.ReferenceAttention;
import dev.heed.graph.CsrGraph;
import java.util.Locale;
import java.util.Objects;
import java.util.SplittableRandom;

/**
 * Check vectors: a small graph with input features and the class probabilities the model's exporter
 * computed for it with its own forward pass. A model file may carry them ({@code
 * docs/model-format.md}, "Check vectors"); {@link ModelFile#read} then runs the model over them and
 * fails if an output deviates by more than the {@linkplain #tolerance() tolerance}. They catch what
 * shape checks cannot: a square weight stored transposed (the {@code [out, in]} layout of many
 * training stacks, where Heed reads {@code [in, out]}), heads in another order, or the halves of a
 * GAT attention vector swapped all load with valid shapes and give wrong probabilities.
 *
 * <p>The graph is a {@link CsrGraph} of m nodes (1 ≤ m ≤ {@value #MAX_NODES}; rows are targets,
 * columns their sources, exactly as the layers see it: no self-loops are added), the features an m
 * × f matrix (f the model's input features) and the expected probabilities an m × classes matrix,
 * both row-major. Exporters use {@link #sampleGraph()} and {@link #sampleFeatures(int)} unless
 * given other inputs.
 *
 * <p>Cost: {@link #compareWithReference} is one forward pass over m nodes with the float64
 * reference attention, O(m² · heads · width) per attention layer: milliseconds for the 8-node
 * sample graph.
 *
 * <p>Thread safety: immutable; accessors copy.
 */
public final class CheckVectors {

  /** Tolerance exporters write unless told otherwise: largest absolute probability deviation. */
  public static final double DEFAULT_TOLERANCE = 1e-4;

  /** Largest tolerance a file may declare; a looser one would hide real changes of the outputs. */
  public static final double MAX_TOLERANCE = 0.01;

  /** Most nodes in a check graph (the check runs on every load, in O(m²) per layer). */
  public static final int MAX_NODES = 256;

  /** How far a row of expected probabilities may sum from 1 (they come from a softmax). */
  static final double ROW_SUM_SLACK = 1e-3;

  /** Seed of {@link #sampleFeatures(int)}. */
  public static final long SAMPLE_SEED = 20_180_430L;

  /**
   * The sample graph's rows (targets) and their sources: node 0 has only its self-loop, node 1 no
   * sources at all (attention gives it zeros), the others 2 to 5 sources, with and without
   * self-loops. docs/export_model.py uses the same graph.
   */
  private static final int[][] SAMPLE_ROWS = {
    {0}, {}, {0, 2, 3}, {1, 2, 3, 4}, {2, 4, 5, 6, 7}, {3, 5}, {0, 4, 6, 7}, {1, 5, 6, 7}
  };

  private final CsrGraph graph;
  private final int featureCount;
  private final float[] features;
  private final int classCount;
  private final double[] probabilities;
  private final double tolerance;
  private final String computedBy;

  private CheckVectors(
      CsrGraph graph,
      int featureCount,
      float[] features,
      int classCount,
      double[] probabilities,
      double tolerance,
      String computedBy) {
    this.graph = graph;
    this.featureCount = featureCount;
    this.features = features;
    this.classCount = classCount;
    this.probabilities = probabilities;
    this.tolerance = tolerance;
    this.computedBy = computedBy;
  }

  /**
   * Creates check vectors after validating them. The arrays are copied.
   *
   * @param graph the check graph, m nodes (1 ≤ m ≤ {@value #MAX_NODES}), as the layers see it
   * @param features input, not modified: m × featureCount values, row-major, all finite
   * @param featureCount features per node, at least 1
   * @param expectedProbabilities input, not modified: m × classCount values, row-major, each in [0,
   *     1], each row summing to 1 (within 1e-3)
   * @param classCount classes, at least 1
   * @param tolerance the largest absolute deviation a model's probability may have, in (0, {@value
   *     #MAX_TOLERANCE}]
   * @param computedBy what computed the expected probabilities (for reports), or empty
   * @return the check vectors
   * @throws IllegalArgumentException if a count, length or value is out of range (the message names
   *     the row and column)
   */
  public static CheckVectors of(
      CsrGraph graph,
      float[] features,
      int featureCount,
      double[] expectedProbabilities,
      int classCount,
      double tolerance,
      String computedBy) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(features, "features");
    Objects.requireNonNull(expectedProbabilities, "expectedProbabilities");
    Objects.requireNonNull(computedBy, "computedBy");
    int m = graph.nodeCount();
    checkNodeCount(m);
    if (featureCount < 1 || classCount < 1) {
      throw new IllegalArgumentException(
          "feature and class counts must be at least 1, got "
              + featureCount
              + " and "
              + classCount);
    }
    checkLength("features", features.length, m, featureCount);
    checkLength("expected probabilities", expectedProbabilities.length, m, classCount);
    double[] wide = new double[features.length];
    for (int i = 0; i < wide.length; i++) {
      wide[i] = features[i];
    }
    checkFinite("features", wide, featureCount);
    checkProbabilities("expected probabilities", expectedProbabilities, classCount);
    checkTolerance(tolerance);
    return new CheckVectors(
        graph,
        featureCount,
        features.clone(),
        classCount,
        expectedProbabilities.clone(),
        tolerance,
        computedBy);
  }

  /**
   * Returns the sample check graph exporters use by default: 8 nodes, 23 entries, covering a node
   * with only its self-loop (0), a node with no sources (1) and rows of 2 to 5 sources.
   *
   * @return the graph
   */
  public static CsrGraph sampleGraph() {
    int[] offsets = new int[SAMPLE_ROWS.length + 1];
    int entries = 0;
    for (int i = 0; i < SAMPLE_ROWS.length; i++) {
      entries += SAMPLE_ROWS[i].length;
      offsets[i + 1] = entries;
    }
    int[] columns = new int[entries];
    for (int i = 0; i < SAMPLE_ROWS.length; i++) {
      System.arraycopy(SAMPLE_ROWS[i], 0, columns, offsets[i], SAMPLE_ROWS[i].length);
    }
    return CsrGraph.of(offsets, columns);
  }

  /**
   * Returns sample features for {@link #sampleGraph()}: uniform in [-2, 2), rounded to float32,
   * drawn from a {@link SplittableRandom} seeded with {@value #SAMPLE_SEED} (so the same count
   * gives the same values on every JVM).
   *
   * @param featureCount features per node, at least 1
   * @return a new array of 8 × featureCount values, row-major
   * @throws IllegalArgumentException if featureCount is below 1
   */
  public static float[] sampleFeatures(int featureCount) {
    if (featureCount < 1 || featureCount > (1 << 24)) {
      throw new IllegalArgumentException(
          "featureCount must be in 1.." + (1 << 24) + ", got " + featureCount);
    }
    SplittableRandom random = new SplittableRandom(SAMPLE_SEED);
    float[] x = new float[SAMPLE_ROWS.length * featureCount];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) (4 * random.nextDouble() - 2);
    }
    return x;
  }

  /**
   * Returns the check graph.
   *
   * @return the graph (immutable)
   */
  public CsrGraph graph() {
    return graph;
  }

  /**
   * Returns the number of check rows (the graph's node count).
   *
   * @return m
   */
  public int nodeCount() {
    return graph.nodeCount();
  }

  /**
   * Returns the features per node.
   *
   * @return f
   */
  public int featureCount() {
    return featureCount;
  }

  /**
   * Returns the number of classes.
   *
   * @return the class count
   */
  public int classCount() {
    return classCount;
  }

  /**
   * Returns the input features.
   *
   * @return a new array, m × {@link #featureCount()}, row-major
   */
  public float[] features() {
    return features.clone();
  }

  /**
   * Returns the expected probabilities.
   *
   * @return a new array, m × {@link #classCount()}, row-major
   */
  public double[] expectedProbabilities() {
    return probabilities.clone();
  }

  /**
   * Returns the largest absolute deviation of a probability that passes.
   *
   * @return the tolerance
   */
  public double tolerance() {
    return tolerance;
  }

  /**
   * Returns what computed the expected probabilities, as the writer described it.
   *
   * @return the description, possibly empty
   */
  public String computedBy() {
    return computedBy;
  }

  /**
   * Runs {@code model} over the check graph with the float64 reference attention ({@link
   * dev.heed.attention.ReferenceAttention}; the layers' other arithmetic is the serving float32)
   * and compares its probabilities with the expected ones. This is the check {@link ModelFile#read}
   * makes; it needs no kernel on the class path.
   *
   * @param model the model, with {@link #featureCount()} inputs and {@link #classCount()} classes
   * @return the largest deviation
   * @throws IllegalArgumentException if the model's widths differ from the checks'
   */
  public Deviation compareWithReference(AttentionModel model) {
    checkFits(model);
    return deviation(
        model
            .withKernelSource(path -> ReferenceAttention.kernel())
            .forward(graph, features, PathChoice.SPARSE, false)
            .values());
  }

  /**
   * Runs {@code model} over the check graph on a path with its own kernels and compares its
   * probabilities with the expected ones.
   *
   * @param model the model, with {@link #featureCount()} inputs and {@link #classCount()} classes
   * @param path the path to run
   * @return the largest deviation
   * @throws IllegalArgumentException if the model's widths differ from the checks'
   * @throws IllegalStateException if the path's kernel is not on the class path
   */
  public Deviation compare(AttentionModel model, PathChoice path) {
    checkFits(model);
    return deviation(model.forward(graph, features, path, false).values());
  }

  private void checkFits(AttentionModel model) {
    Objects.requireNonNull(model, "model");
    if (model.inputFeatureCount() != featureCount || model.classLabels().size() != classCount) {
      throw new IllegalArgumentException(
          "the check vectors have "
              + featureCount
              + " features and "
              + classCount
              + " classes but the model reads "
              + model.inputFeatureCount()
              + " features and has "
              + model.classLabels().size()
              + " class labels");
    }
  }

  private Deviation deviation(float[] actual) {
    int worst = 0;
    double largest = -1;
    for (int i = 0; i < probabilities.length; i++) {
      double d = Math.abs(actual[i] - probabilities[i]);
      if (d > largest || Double.isNaN(d)) {
        largest = Double.isNaN(d) ? Double.POSITIVE_INFINITY : d;
        worst = i;
      }
    }
    return new Deviation(
        largest,
        worst / classCount,
        worst % classCount,
        probabilities[worst],
        actual[worst],
        tolerance);
  }

  /**
   * The largest deviation of a model's probabilities from the expected ones.
   *
   * @param largest the largest absolute difference over all rows and classes
   * @param row the check row (node of the check graph) where it occurs
   * @param classIndex the class where it occurs
   * @param expected the expected probability there
   * @param actual the model's probability there
   * @param tolerance the check vectors' tolerance
   */
  public record Deviation(
      double largest, int row, int classIndex, double expected, double actual, double tolerance) {

    /**
     * Returns whether the deviation is within the tolerance.
     *
     * @return true if the model reproduces the check vectors
     */
    public boolean withinTolerance() {
      return largest <= tolerance;
    }

    /**
     * Describes the deviation with the class's label, for messages.
     *
     * @param classLabel the label of {@link #classIndex()}
     * @return for example "4.1e-01 at check row 3, class 'merchant' (expected 0.1020, got 0.5143)"
     */
    public String describe(String classLabel) {
      return String.format(
          Locale.ROOT,
          "%.2e at check row %d, class '%s' (expected %.6f, got %.6f)",
          largest,
          row,
          classLabel,
          expected,
          actual);
    }
  }

  static void checkNodeCount(int m) {
    if (m < 1 || m > MAX_NODES) {
      throw new IllegalArgumentException(
          "a check graph needs 1.." + MAX_NODES + " nodes, got " + m);
    }
  }

  private static void checkLength(String what, int length, int rows, int columns) {
    if (length != (long) rows * columns) {
      throw new IllegalArgumentException(
          what
              + " must hold nodes × width = "
              + rows
              + " × "
              + columns
              + " = "
              + (long) rows * columns
              + " values, got "
              + length);
    }
  }

  /** Checks that every value is finite; the message names the row and column. */
  static void checkFinite(String what, double[] values, int columns) {
    for (int i = 0; i < values.length; i++) {
      if (!Double.isFinite(values[i])) {
        throw new IllegalArgumentException(
            what
                + ": "
                + values[i]
                + " at row "
                + i / columns
                + ", column "
                + i % columns
                + "; every value must be finite");
      }
    }
  }

  /** Checks that every row holds probabilities: finite, in [0, 1], summing to 1. */
  static void checkProbabilities(String what, double[] values, int classes) {
    checkFinite(what, values, classes);
    for (int row = 0; row < values.length / classes; row++) {
      double sum = 0;
      for (int c = 0; c < classes; c++) {
        double p = values[row * classes + c];
        if (p < 0 || p > 1) {
          throw new IllegalArgumentException(
              what + ": " + p + " at row " + row + ", column " + c + " is not a probability");
        }
        sum += p;
      }
      if (Math.abs(sum - 1) > ROW_SUM_SLACK) {
        throw new IllegalArgumentException(
            what
                + ": row "
                + row
                + " sums to "
                + sum
                + "; expected probabilities (the softmax's output, each row summing to 1), not"
                + " scores");
      }
    }
  }

  static void checkTolerance(double tolerance) {
    if (!(tolerance > 0 && tolerance <= MAX_TOLERANCE)) {
      throw new IllegalArgumentException(
          "the tolerance must be a number in (0, " + MAX_TOLERANCE + "], got " + tolerance);
    }
  }

  @Override
  public String toString() {
    return "CheckVectors["
        + graph.nodeCount()
        + " nodes, "
        + featureCount
        + " features -> "
        + classCount
        + " classes, tolerance "
        + tolerance
        + "]";
  }
}
