package dev.heed.model;

import dev.heed.graph.AttentionPattern;
import dev.heed.internal.model.ModelSteps;
import java.util.List;

/** The implementation of {@link ModelSteps}, installed by {@link AttentionModel}. Stateless. */
final class StepAccess extends ModelSteps {

  @Override
  public int reads(AttentionModel model, int layer) {
    return switch (model.layers().get(layer).reach()) {
      case SELF -> READS_SELF;
      case IN_NEIGHBOURS -> READS_IN_NEIGHBOURS;
      case EVERY_NODE -> READS_EVERY_NODE;
    };
  }

  @Override
  public float[] run(
      AttentionModel model,
      int from,
      int to,
      AttentionPattern pattern,
      int rowsIn,
      int rowsOut,
      float[] input,
      PathChoice path) {
    List<Layer> layers = model.layers();
    assert input.length == rowsIn * layers.get(from).inputWidth();
    ForwardPass pass = new ForwardPass(pattern, rowsIn, path, model.kernelSource());
    float[] x = input;
    for (int index = from; index < to; index++) {
      Layer layer = layers.get(index);
      if (layer.reach() == Layer.Reach.IN_NEIGHBOURS) {
        pass.rowsOut = rowsOut;
        x = layer.forward(x, pass);
        pass.rowsIn = rowsOut;
      } else {
        x = layer.forward(x, pass);
      }
    }
    return x;
  }
}
