package dev.heed.model;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.graph.CsrGraph;
import dev.heed.npy.NpyArray;
import java.util.Arrays;
import java.util.Iterator;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The {@code "checks"} object of a model file and its tensors ({@code docs/model-format.md}, "Check
 * vectors"): reading with the same kind of validation as the layers (every error names the file and
 * the tensor), writing, and the check {@link ModelFile#read} makes. Internal; stateless.
 */
final class CheckEntries {

  private static final Logger LOG = LoggerFactory.getLogger(CheckEntries.class);

  /** The description's key for check vectors. */
  static final String KEY = "checks";

  /** Prefix of the tensor names {@link #write} gives (entries {@code checks/<role>.npy}). */
  static final String TENSOR_PREFIX = "checks/";

  static final String ROW_OFFSETS = "row_offsets";
  static final String COLUMNS = "columns";
  static final String FEATURES = "features";
  static final String PROBABILITIES = "probabilities";

  /** The roles, in the order they are written. */
  static final List<String> ROLES = List.of(ROW_OFFSETS, COLUMNS, FEATURES, PROBABILITIES);

  private static final Set<String> KEYS = Set.of("tolerance", "computed_by", "tensors");

  private CheckEntries() {}

  /**
   * Reads and validates the checks object against the model it belongs to.
   *
   * @param file the file name, for messages
   * @param json the value of {@value #KEY}
   * @param arrays the archive's tensors
   * @param used tensor names used so far; the checks' tensors are added (a tensor a layer uses is
   *     an error)
   * @param model the model read from the same description
   */
  static CheckVectors read(
      String file,
      JsonNode json,
      Map<String, NpyArray> arrays,
      Set<String> used,
      AttentionModel model)
      throws ModelFormatException {
    if (!json.isObject()) {
      throw error(file, null, "\"" + KEY + "\" must be a JSON object, got " + json);
    }
    for (Iterator<String> it = json.fieldNames(); it.hasNext(); ) {
      String key = it.next();
      if (!KEYS.contains(key)) {
        throw error(
            file, null, "unknown key '" + key + "'; expected " + new java.util.TreeSet<>(KEYS));
      }
    }
    double tolerance = CheckVectors.DEFAULT_TOLERANCE;
    JsonNode t = json.get("tolerance");
    if (t != null) {
      if (!t.isNumber()) {
        throw error(file, null, "'tolerance' must be a number, got " + t);
      }
      tolerance = t.asDouble();
      try {
        CheckVectors.checkTolerance(tolerance);
      } catch (IllegalArgumentException e) {
        throw error(file, null, e.getMessage());
      }
    }
    String computedBy = "";
    JsonNode c = json.get("computed_by");
    if (c != null) {
      if (!c.isTextual()) {
        throw error(file, null, "'computed_by' must be a string, got " + c);
      }
      computedBy = c.asText();
    }
    JsonNode tensors = json.get("tensors");
    if (tensors == null || !tensors.isObject()) {
      throw error(
          file,
          null,
          "'tensors' must be an object mapping the roles " + ROLES + " to tensor names");
    }
    for (Iterator<String> it = tensors.fieldNames(); it.hasNext(); ) {
      String role = it.next();
      if (!ROLES.contains(role)) {
        throw error(file, null, "unknown tensor role '" + role + "'; the roles are " + ROLES);
      }
    }
    int classes = model.classLabels().size();
    Entry offsets = entry(file, tensors, ROW_OFFSETS, arrays, used, false);
    offsets.checkRank(1, "[nodes + 1]");
    int m = offsets.array.dimension(0) - 1;
    try {
      CheckVectors.checkNodeCount(m);
    } catch (IllegalArgumentException e) {
      throw offsets.error(e.getMessage() + " (this tensor holds nodes + 1 offsets)");
    }
    Entry columns = entry(file, tensors, COLUMNS, arrays, used, false);
    columns.checkRank(1, "[entries]");
    CsrGraph graph;
    try {
      graph = CsrGraph.of(offsets.ints(), columns.ints());
    } catch (IllegalArgumentException e) {
      throw error(
          file,
          columns.name,
          "tensors '"
              + offsets.name
              + "' and '"
              + columns.name
              + "' are not a CSR graph (rows are targets, sorted sources): "
              + e.getMessage());
    }
    Entry features = entry(file, tensors, FEATURES, arrays, used, true);
    features.checkShape(m, model.inputFeatureCount(), "nodes × input_features");
    float[] x = features.array.toFloats();
    double[] wide = new double[x.length];
    for (int i = 0; i < x.length; i++) {
      wide[i] = x[i];
    }
    Entry probabilities = entry(file, tensors, PROBABILITIES, arrays, used, true);
    probabilities.checkShape(m, classes, "nodes × classes");
    double[] p = probabilities.array.toDoubles();
    try {
      CheckVectors.checkFinite(features.where(), wide, model.inputFeatureCount());
    } catch (IllegalArgumentException e) {
      throw error(file, features.name, e.getMessage());
    }
    try {
      CheckVectors.checkProbabilities(probabilities.where(), p, classes);
    } catch (IllegalArgumentException e) {
      throw error(file, probabilities.name, e.getMessage());
    }
    return CheckVectors.of(graph, x, model.inputFeatureCount(), p, classes, tolerance, computedBy);
  }

  /** One check tensor as found in the archive. */
  private record Entry(String file, String role, String name, NpyArray array) {

    String where() {
      return "tensor '" + name + "' (role " + role + ")";
    }

    ModelFormatException error(String problem) {
      return CheckEntries.error(file, name, where() + ": " + problem);
    }

    void checkRank(int rank, String expected) throws ModelFormatException {
      if (array.rank() != rank) {
        throw error("shape " + Arrays.toString(array.shape()) + ", expected " + expected);
      }
    }

    void checkShape(int rows, int columns, String why) throws ModelFormatException {
      if (!Arrays.equals(array.shape(), new int[] {rows, columns})) {
        throw error(
            "shape "
                + Arrays.toString(array.shape())
                + ", expected ["
                + rows
                + ", "
                + columns
                + "] ("
                + why
                + ")");
      }
    }

    int[] ints() throws ModelFormatException {
      try {
        return array.toInts();
      } catch (IllegalStateException e) {
        throw error(e.getMessage());
      }
    }
  }

  private static Entry entry(
      String file,
      JsonNode tensors,
      String role,
      Map<String, NpyArray> arrays,
      Set<String> used,
      boolean floatingPoint)
      throws ModelFormatException {
    JsonNode ref = tensors.get(role);
    if (ref == null || !ref.isTextual()) {
      throw error(
          file, null, "tensor role '" + role + "' must name a tensor (a string), got " + ref);
    }
    String name = ref.asText();
    NpyArray array = arrays.get(name);
    if (array == null) {
      throw error(
          file,
          name,
          "tensor '" + name + "' (role " + role + "): no entry '" + name + ".npy' in the file");
    }
    if (!used.add(name)) {
      throw error(
          file,
          name,
          "tensor '"
              + name
              + "' (role "
              + role
              + ") is used elsewhere too (by a layer or another role); check vectors need"
              + " tensors of their own");
    }
    Entry e = new Entry(file, role, name, array);
    if (array.dataType().isFloatingPoint() != floatingPoint) {
      throw e.error(
          "type "
              + array.dataType().descriptor()
              + "; expected "
              + (floatingPoint
                  ? "'<f4' or '<f8' (float32 or float64)"
                  : "'<i4' or '<i8' (int32 or int64)"));
    }
    return e;
  }

  private static ModelFormatException error(String file, String tensor, String problem) {
    return new ModelFormatException(file + ": " + KEY + ": " + problem, null, tensor, null);
  }

  /** Adds the checks object to a description and its tensors to the archive's arrays. */
  static void write(ObjectNode root, Map<String, NpyArray> arrays, CheckVectors checks) {
    ObjectNode json = root.putObject(KEY);
    json.put("tolerance", checks.tolerance());
    if (!checks.computedBy().isEmpty()) {
      json.put("computed_by", checks.computedBy());
    }
    ObjectNode tensors = json.putObject("tensors");
    CsrGraph graph = checks.graph();
    int m = graph.nodeCount();
    int[] columns = graph.columns();
    put(tensors, arrays, ROW_OFFSETS, NpyArray.ofInts(graph.rowOffsets(), m + 1));
    put(tensors, arrays, COLUMNS, NpyArray.ofInts(columns, columns.length));
    put(tensors, arrays, FEATURES, NpyArray.ofFloats(checks.features(), m, checks.featureCount()));
    put(
        tensors,
        arrays,
        PROBABILITIES,
        NpyArray.ofDoubles(checks.expectedProbabilities(), m, checks.classCount()));
  }

  private static void put(
      ObjectNode tensors, Map<String, NpyArray> arrays, String role, NpyArray array) {
    String name = TENSOR_PREFIX + role;
    if (arrays.putIfAbsent(name, array) != null) {
      throw new IllegalArgumentException(
          "a layer tensor is named '" + name + "', the name of a check tensor; rename that tensor");
    }
    tensors.put(role, name);
  }

  /**
   * Runs the model over its check vectors with the reference attention and fails if a probability
   * deviates by more than the tolerance.
   *
   * @param file the file name, for messages
   * @param model a model with check vectors
   */
  static void verify(String file, AttentionModel model) throws ModelFormatException {
    CheckVectors checks = model.checks().orElseThrow();
    CheckVectors.Deviation d = checks.compareWithReference(model);
    String label = model.classLabels().get(d.classIndex());
    if (d.withinTolerance()) {
      LOG.debug("{}: check vectors reproduced, largest deviation {}", file, d.describe(label));
      return;
    }
    throw new ModelFormatException(
        file
            + ": the model does not reproduce its check vectors: largest deviation "
            + d.describe(label)
            + String.format(Locale.ROOT, ", tolerance %.1e", d.tolerance())
            + (checks.computedBy().isEmpty() ? "" : "; expected values from " + checks.computedBy())
            + ". A weight in the wrong layout is the likely cause: Heed reads every weight as"
            + " [in, out] (y = x · W), and a square weight written in the [out, in] layout of"
            + " many training stacks (y = x · Wᵀ) passes every shape check; write W.T instead."
            + " Check the order of heads and of the attention vectors' target and source halves"
            + " too (docs/model-format.md, \"Weight layout\"). If the weights were changed on"
            + " purpose, compute the check vectors again.",
        null,
        null,
        null);
  }
}
