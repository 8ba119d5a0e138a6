package dev.heed.model;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import java.util.Arrays;
import java.util.List;
import java.util.Objects;

/**
 * A model's layers as per-node steps around each attention call, for engines that gather each
 * target's neighbours themselves (a distributed one, for example) and run the attention in between:
 * {@link #project} gives a block of nodes' query, key and value rows, the engine computes {@code
 * Σ_j α_ij v_j} per target and head over its own copy of the graph, and {@link #finish} turns those
 * rows into the layer's output (heads combined, bias, residual, normalisation, feed-forward,
 * activation). Layers that compute each row alone (dense, softmax) run through {@link #perNode}.
 * The steps are the same code a whole-graph {@link AttentionModel#forward} runs, so an engine that
 * attends exactly gets the same outputs to float rounding.
 *
 * <pre>{@code
 * LayerSteps steps = LayerSteps.of(model);         // fails if a layer attends to every node
 * float[] x = features;                            // rows × model.inputFeatureCount()
 * for (int l = 0; l < steps.layerCount(); l++) {
 *   if (!steps.attends(l)) { x = steps.perNode(l, x, rows); continue; }
 *   LayerSteps.Projections p = steps.project(l, x, rows);
 *   float[] attended = ...;                        // rows × shape(l).valueWidth(), by the engine
 *   x = steps.finish(l, x, attended, rows);
 * }
 * }</pre>
 *
 * <p>Cost: {@link #project} and {@link #finish} are O(rows·in·out) per projection; nothing depends
 * on the graph. Thread safety: immutable; every method may be called from many threads at once.
 */
public final class LayerSteps {

  private final AttentionModel model;
  private final List<Layer> layers;

  /** Per layer: the kernel call's score function and shape (null for per-node layers). */
  private final Layer.AttentionInputs[] calls;

  private LayerSteps(AttentionModel model) {
    this.model = model;
    this.layers = model.layers();
    this.calls = new Layer.AttentionInputs[layers.size()];
    for (int l = 0; l < calls.length; l++) {
      if (layers.get(l).reach() == Layer.Reach.IN_NEIGHBOURS) {
        calls[l] = layers.get(l).prepareAttention(new float[0], 0, 0); // shapes only: no rows
      }
    }
  }

  /**
   * Cuts a model into steps.
   *
   * @param model the model, not null
   * @return the steps
   * @throws IllegalArgumentException if a layer attends to every node (full self-attention over the
   *     complete pattern): each of its rows reads all n rows, so it cannot run row block by row
   *     block; the message names the layer
   */
  public static LayerSteps of(AttentionModel model) {
    Objects.requireNonNull(model, "model");
    for (Layer layer : model.layers()) {
      if (layer.reach() == Layer.Reach.EVERY_NODE) {
        throw new IllegalArgumentException(
            "layer '"
                + layer.name()
                + "' ("
                + layer.kind()
                + ", pattern complete) attends to every node, so each of its rows reads all n rows"
                + " and it cannot run over blocks of the graph's rows; only graph attention and"
                + " graph-masked self-attention can");
      }
    }
    return new LayerSteps(model);
  }

  /**
   * Returns the model these steps run.
   *
   * @return the model
   */
  public AttentionModel model() {
    return model;
  }

  /**
   * Returns the number of layers, as {@code model().layers().size()}.
   *
   * @return the layer count
   */
  public int layerCount() {
    return layers.size();
  }

  /**
   * Returns whether layer {@code l} attends along the graph (then use {@link #project} and {@link
   * #finish}; otherwise {@link #perNode}).
   *
   * @param l the layer index
   * @return true for graph attention and graph-masked self-attention
   */
  public boolean attends(int l) {
    return layer(l).reach() == Layer.Reach.IN_NEIGHBOURS;
  }

  /**
   * Returns the score function of attention layer {@code l}.
   *
   * @param l the index of an attention layer
   * @return the score function
   * @throws IllegalArgumentException if the layer does not attend
   */
  public ScoreFunction score(int l) {
    attending(l);
    return calls[l].score();
  }

  /**
   * Returns the head shape of attention layer {@code l}: query and key rows are {@code keyWidth()}
   * floats per node, value and attended rows {@code valueWidth()}.
   *
   * @param l the index of an attention layer
   * @return the shape
   * @throws IllegalArgumentException if the layer does not attend
   */
  public HeadShape shape(int l) {
    attending(l);
    return calls[l].shape();
  }

  /**
   * The per-node rows an attention layer's kernel call reads. {@link #keysAreValues()} says whether
   * the key and value arrays are the same (GATv2: values are {@code W_source h_j}, its keys).
   *
   * @param queries rows × keyWidth
   * @param keys rows × keyWidth
   * @param values rows × valueWidth
   */
  public record Projections(float[] queries, float[] keys, float[] values) {
    /**
     * Returns whether keys and values are one array (send it once).
     *
     * @return true if {@code keys() == values()}
     */
    public boolean keysAreValues() {
      return keys == values;
    }
  }

  /**
   * Projects a block of nodes for attention layer {@code l}. O(rows·in·H·d).
   *
   * @param l the index of an attention layer
   * @param input rows × inputWidth of the layer, row-major, not modified
   * @param rows the number of rows
   * @return new arrays, node-major and head-contiguous
   * @throws IllegalArgumentException if the layer does not attend or the input is too short
   */
  public Projections project(int l, float[] input, int rows) {
    Layer layer = attending(l);
    checkRows(layer, "input", input, rows, layer.inputWidth());
    Layer.AttentionInputs in = layer.prepareAttention(input, rows, rows);
    return new Projections(in.query(), in.key(), in.value());
  }

  /**
   * Finishes attention layer {@code l} for a block of nodes, given their attention outputs.
   *
   * @param l the index of an attention layer
   * @param input the same rows × inputWidth given to {@link #project}, not modified
   * @param attended rows × valueWidth: per target and head {@code Σ_j α_ij v_j} (zeros for a target
   *     without sources); may be overwritten
   * @param rows the number of rows
   * @return rows × outputWidth of the layer
   * @throws IllegalArgumentException if the layer does not attend or an array is too short
   */
  public float[] finish(int l, float[] input, float[] attended, int rows) {
    Layer layer = attending(l);
    checkRows(layer, "input", input, rows, layer.inputWidth());
    checkRows(layer, "attended", attended, rows, shape(l).valueWidth());
    return layer.finishAttention(input, attended, rows);
  }

  /**
   * Runs a layer that computes each row alone (dense, softmax) over a block of rows.
   * O(rows·in·out).
   *
   * @param l the index of a layer that does not attend
   * @param input rows × inputWidth, not modified
   * @param rows the number of rows
   * @return a new rows × outputWidth array
   * @throws IllegalArgumentException if the layer attends or the input is too short
   */
  public float[] perNode(int l, float[] input, int rows) {
    Layer layer = layer(l);
    if (layer.reach() != Layer.Reach.SELF) {
      throw new IllegalArgumentException(layer + " attends; use project and finish");
    }
    checkRows(layer, "input", input, rows, layer.inputWidth());
    float[] x =
        input.length == rows * layer.inputWidth()
            ? input
            : Arrays.copyOf(input, rows * layer.inputWidth());
    return layer.forward(x, ForwardPass.perNode(rows));
  }

  private Layer layer(int l) {
    Objects.checkIndex(l, layers.size());
    return layers.get(l);
  }

  private Layer attending(int l) {
    Layer layer = layer(l);
    if (layer.reach() != Layer.Reach.IN_NEIGHBOURS) {
      throw new IllegalArgumentException(layer + " does not attend; use perNode");
    }
    return layer;
  }

  private static void checkRows(Layer layer, String what, float[] a, int rows, int width) {
    Objects.requireNonNull(a, what);
    if (rows < 0 || a.length < (long) rows * width) {
      throw new IllegalArgumentException(
          layer
              + ": "
              + what
              + " must hold rows × width = "
              + rows
              + " × "
              + width
              + " floats, got "
              + a.length);
    }
  }
}
