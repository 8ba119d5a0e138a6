package dev.heed.check;

import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyArray;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * Classifies a small seeded graph with a seeded, untrained model (one GAT layer, 2 heads of 3, and
 * a softmax over three labels) on the path named by the first argument ({@code SPARSE} or {@code
 * DENSE}), and prints, one fact per line: the module this class and the core run in (null on the
 * class path), whether the sparse and dense modules were resolved, the kernel that ran, and every
 * node's label and probability. {@code ModulePathIT} runs it on the module path and on the class
 * path and compares the lines.
 */
public final class ModularClassification {

  private static final int NODES = 40;
  private static final int FEATURES = 5;
  private static final long SEED = 20261204L;

  private ModularClassification() {}

  /**
   * Runs the classification and prints the facts.
   *
   * @param args the path: {@code SPARSE} or {@code DENSE}
   * @throws Exception if the model cannot be built (a bug in this program)
   */
  public static void main(String[] args) throws Exception {
    ComputePath path = ComputePath.valueOf(args[0]);
    SplittableRandom random = new SplittableRandom(SEED);
    System.out.println("program-module " + ModularClassification.class.getModule().getName());
    System.out.println("core-module " + AttentionKernels.class.getModule().getName());
    System.out.println(
        "sparse-module " + ModuleLayer.boot().findModule("dev.heed.sparse").isPresent());
    System.out.println(
        "dense-module " + ModuleLayer.boot().findModule("dev.heed.dense").isPresent());
    System.out.println(
        "kernel " + AttentionKernels.forPath(path, KernelOptions.defaults()).describe());

    NodeClassifier classifier =
        NodeClassifier.of(
            model(random),
            ClassifyOptions.defaults()
                .withPath(path == ComputePath.SPARSE ? PathChoice.SPARSE : PathChoice.DENSE)
                .withoutExplanations());
    Classification result = classifier.classify(graph(random), features(random));
    for (NodePrediction p : result.predictions()) {
      System.out.println("node " + p.node() + " " + p.label() + " " + p.probability());
    }
  }

  /** A ring with a chord from every node to a random other node. */
  private static CsrGraph graph(SplittableRandom random) {
    int[] sources = new int[2 * NODES];
    int[] targets = new int[2 * NODES];
    for (int i = 0; i < NODES; i++) {
      sources[2 * i] = i;
      targets[2 * i] = (i + 1) % NODES;
      sources[2 * i + 1] = i;
      targets[2 * i + 1] = random.nextInt(NODES);
    }
    return CsrGraphBuilder.fromEdges(sources, targets, NODES).build();
  }

  private static NodeFeatures features(SplittableRandom random) {
    float[] values = new float[NODES * FEATURES];
    for (int i = 0; i < values.length; i++) {
      values[i] = (float) random.nextGaussian();
    }
    return NodeFeatures.ofRowMajor(values, NODES, FEATURES);
  }

  private static AttentionModel model(SplittableRandom random) throws Exception {
    String description =
        """
        {
          "format": "heed-model",
          "format_version": 1,
          "input_features": %d,
          "class_labels": ["first", "second", "third"],
          "layers": [
            {"kind": "graph_attention", "name": "gat", "score": "gat", "heads": 2,
             "head_width": 3, "combine_heads": "mean",
             "tensors": {"weight": "gat.weight", "attention_target": "gat.attention_target",
                         "attention_source": "gat.attention_source"}},
            {"kind": "softmax", "name": "probabilities"}
          ]
        }
        """
            .formatted(FEATURES);
    Map<String, NpyArray> tensors = new LinkedHashMap<>();
    tensors.put("gat.weight", gaussian(random, FEATURES, 6));
    tensors.put("gat.attention_target", gaussian(random, 2, 3));
    tensors.put("gat.attention_source", gaussian(random, 2, 3));
    return ModelFile.fromParts(description, tensors);
  }

  private static NpyArray gaussian(SplittableRandom random, int rows, int columns) {
    float[] values = new float[rows * columns];
    for (int i = 0; i < values.length; i++) {
      values[i] = (float) (0.5 * random.nextGaussian());
    }
    return NpyArray.ofFloats(values, rows, columns);
  }
}
