package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import java.util.LinkedHashMap;
import java.util.Map;

/**
 * A position-wise linear layer with optional bias and activation: {@code y_i = act(x_i · W + b)}
 * for every node i. Tensors {@code weight} [in, units] and, if {@code bias}, {@code bias} [units].
 * No information moves between nodes.
 *
 * <p>Cost per call: O(n·in·units).
 *
 * <p>Thread safety: immutable.
 */
public final class DenseLayer extends Layer {

  /** The kind written in model files. */
  public static final String KIND = "dense";

  private final Activation activation;
  private final Map<String, Tensor> tensors;

  private DenseLayer(String name, int in, int units, Activation activation, Map<String, Tensor> t) {
    super(name, in, units);
    this.activation = activation;
    this.tensors = t;
  }

  static DenseLayer read(LayerReader r) throws ModelFormatException {
    int units = r.integer("units", 1);
    boolean bias = r.bool("bias", true);
    Activation act = r.activation("activation", Activation.IDENTITY);
    Map<String, Tensor> t = new LinkedHashMap<>();
    t.put("weight", r.tensor("weight", "input width by units", r.inputWidth, units));
    if (bias) {
      t.put("bias", r.tensor("bias", "units", units));
    }
    r.finish();
    return new DenseLayer(r.name, r.inputWidth, units, act, t);
  }

  @Override
  public String kind() {
    return KIND;
  }

  /**
   * Returns the activation applied after the affine map.
   *
   * @return the activation
   */
  public Activation activation() {
    return activation;
  }

  @Override
  float[] forward(float[] input, ForwardPass pass) {
    Tensor b = tensors.get("bias");
    float[] y =
        ModelMath.project(
            input,
            pass.rowsOut,
            inputWidth(),
            tensors.get("weight").values(),
            outputWidth(),
            b == null ? null : b.values());
    activation.applyInPlace(y);
    return y;
  }

  @Override
  Map<String, Tensor> tensors() {
    return tensors;
  }

  @Override
  void writeHyperParameters(ObjectNode json) {
    json.put("units", outputWidth());
    json.put("bias", tensors.containsKey("bias"));
    json.put("activation", activation.fileName());
  }
}
