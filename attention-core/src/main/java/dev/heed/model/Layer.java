package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import java.util.List;
import java.util.Map;

/**
 * One layer of an {@link AttentionModel}: maps an n × {@link #inputWidth()} feature matrix to an n
 * × {@link #outputWidth()} one, row i belonging to node i. Layers come from model files ({@link
 * ModelFile}) or from each kind's builder; see {@code docs/model-format.md} for each kind's
 * equations and tensors.
 *
 * <p>The kinds: {@link GraphAttentionLayer} ({@code graph_attention}), {@link SelfAttentionLayer}
 * ({@code self_attention}), {@link DenseLayer} ({@code dense}) and {@link SoftmaxLayer} ({@code
 * softmax}, the classification head).
 *
 * <p>Thread safety: immutable; a layer may run for many calls at once, each with its own scratch.
 */
public abstract sealed class Layer
    permits GraphAttentionLayer, SelfAttentionLayer, DenseLayer, SoftmaxLayer {

  private final String name;
  private final int inputWidth;
  private final int outputWidth;

  Layer(String name, int inputWidth, int outputWidth) {
    this.name = name;
    this.inputWidth = inputWidth;
    this.outputWidth = outputWidth;
  }

  /**
   * Returns the layer's name, unique within its model.
   *
   * @return the name
   */
  public final String name() {
    return name;
  }

  /**
   * Returns the kind as written in model files, for example {@code "graph_attention"}.
   *
   * @return the kind
   */
  public abstract String kind();

  /**
   * Returns the number of features per node this layer reads.
   *
   * @return the input width
   */
  public final int inputWidth() {
    return inputWidth;
  }

  /**
   * Returns the number of features per node this layer produces.
   *
   * @return the output width
   */
  public final int outputWidth() {
    return outputWidth;
  }

  /**
   * Returns the number of attention heads, or 0 for a layer that does not attend.
   *
   * @return the head count
   */
  public int attentionHeads() {
    return 0;
  }

  /**
   * Returns the widest per-node row this layer allocates (input, output and intermediate widths),
   * so a caller can check that n rows fit in one Java array before running.
   */
  int widestRow() {
    return Math.max(inputWidth, outputWidth);
  }

  /** How far one output row of a layer reaches into its input rows. */
  enum Reach {
    /** Row i reads input row i only (dense, softmax). */
    SELF,
    /** Row i reads input rows i and its in-neighbours in the graph (graph attention). */
    IN_NEIGHBOURS,
    /** Row i reads every input row (full self-attention over the complete pattern). */
    EVERY_NODE
  }

  /** Returns which input rows one output row reads; the receptive-field planner walks by it. */
  Reach reach() {
    return Reach.SELF;
  }

  /**
   * Runs the layer over the pass's current rows: {@code pass.rowsIn} input rows, of which the first
   * {@code pass.rowsOut} are computed (all of them in a whole-graph pass; in a receptive-field
   * pass, the rows later layers need, which come first in the field's local order).
   *
   * @param input rowsIn × inputWidth, row-major, not modified
   * @param pass the call's rows, pattern, kernels and attention record
   * @return a new rowsOut × outputWidth array
   */
  abstract float[] forward(float[] input, ForwardPass pass);

  /**
   * The inputs of an attention layer's kernel call: node-major, head-contiguous rows (see {@link
   * HeadShape}).
   */
  record AttentionInputs(
      ScoreFunction score, HeadShape shape, float[] query, float[] key, float[] value) {}

  /**
   * Attention layers: the per-node steps before the kernel call, over {@code rowsIn} input rows of
   * which the first {@code rowsOut} are targets (their query rows; the rest are zero).
   */
  AttentionInputs prepareAttention(float[] input, int rowsIn, int rowsOut) {
    throw new UnsupportedOperationException(this + " does not attend");
  }

  /**
   * Attention layers: the per-node steps after the kernel call, for the first {@code rows} rows.
   *
   * @param input the layer's input, at least rows × inputWidth, not modified
   * @param attended the kernel's output, at least rows × value width; may be reused as the output
   * @return rows × outputWidth
   */
  float[] finishAttention(float[] input, float[] attended, int rows) {
    throw new UnsupportedOperationException(this + " does not attend");
  }

  /** The layer's tensors by role, in the order the format lists them. */
  abstract Map<String, Tensor> tensors();

  /**
   * Returns the roles of the layer's weight tensors, in the order the model file lists them (for
   * example {@code weight}, {@code attention_target}, {@code attention_source}, {@code bias}).
   *
   * @return an unmodifiable list, empty for a layer without weights
   */
  public final List<String> tensorRoles() {
    return List.copyOf(tensors().keySet());
  }

  /**
   * Returns the shape of one weight tensor.
   *
   * @param role one of {@link #tensorRoles()}
   * @return a new array of dimensions
   * @throws IllegalArgumentException if the layer has no tensor with that role
   */
  public final int[] tensorShape(String role) {
    return tensor(role).shape().clone();
  }

  /**
   * Returns a copy of one weight tensor's values, float32 in row-major order. O(size).
   *
   * @param role one of {@link #tensorRoles()}
   * @return a new array
   * @throws IllegalArgumentException if the layer has no tensor with that role
   */
  public final float[] tensorValues(String role) {
    return tensor(role).values().clone();
  }

  private Tensor tensor(String role) {
    Tensor t = tensors().get(role);
    if (t == null) {
      throw new IllegalArgumentException(
          "layer '"
              + name
              + "' ("
              + kind()
              + ") has no tensor role '"
              + role
              + "'; it has "
              + tensors().keySet());
    }
    return t;
  }

  /** Writes the hyper-parameters (everything but kind, name and tensors) into {@code json}. */
  abstract void writeHyperParameters(ObjectNode json);

  @Override
  public String toString() {
    return kind() + " '" + name + "' (" + inputWidth + " -> " + outputWidth + ")";
  }
}
