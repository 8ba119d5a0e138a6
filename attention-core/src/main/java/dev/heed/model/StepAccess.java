package dev.heed.model;

import dev.heed.attention.ScoreFunction;
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
    ForwardPass pass = localPass(model, pattern, rowsIn, path);
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

  @Override
  public int projectionWidth(AttentionModel model, int layer) {
    return model.layers().get(layer) instanceof GraphAttentionLayer gat ? gat.projectionWidth() : 0;
  }

  @Override
  public float[] project(AttentionModel model, int layer, float[] input, int rows) {
    return ((GraphAttentionLayer) model.layers().get(layer)).project(input, rows);
  }

  @Override
  public float[] runProjected(
      AttentionModel model,
      int from,
      int to,
      AttentionPattern pattern,
      int rowsIn,
      int rowsOut,
      float[] table,
      int[] rows,
      float[] targetInput,
      PathChoice path) {
    List<Layer> layers = model.layers();
    ForwardPass pass = localPass(model, pattern, rowsIn, path);
    pass.rowsOut = rowsOut;
    float[] x =
        ((GraphAttentionLayer) layers.get(from)).forwardProjected(table, rows, targetInput, pass);
    pass.rowsIn = rowsOut;
    for (int index = from + 1; index < to; index++) {
      x = layers.get(index).forward(x, pass);
    }
    return x;
  }

  @Override
  public float additiveSlope(AttentionModel model, int layer) {
    return model.layers().get(layer) instanceof GraphAttentionLayer gat
            && gat.score() instanceof ScoreFunction.Additive additive
        ? additive.negativeSlope()
        : Float.NaN;
  }

  @Override
  public float[] finishProjected(
      AttentionModel model,
      int from,
      int to,
      float[] attended,
      float[] targetInput,
      int rows,
      PathChoice path) {
    List<Layer> layers = model.layers();
    ForwardPass pass = localPass(model, null, rows, path);
    float[] x =
        ((GraphAttentionLayer) layers.get(from)).finishAttention(targetInput, attended, rows);
    for (int index = from + 1; index < to; index++) {
      x = layers.get(index).forward(x, pass);
    }
    return x;
  }

  private static ForwardPass localPass(
      AttentionModel model, AttentionPattern pattern, int rows, PathChoice path) {
    return new ForwardPass(
        pattern,
        rows,
        path,
        model.kernelSource(),
        model.autoCosts(path),
        model.kernelOptions().threads());
  }
}
