package dev.heed.bench.model;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.demo.DemoGraph;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Whole-model inference: the bundled demo model (two GAT layers and a softmax head) classifying
 * every account of the demo's invented payments network (50,000 accounts, about one million
 * attention entries after symmetrising and adding self-loops), as {@code heed classify --demo}
 * does. Read the score as milliseconds per full classification. Forks get the Vector API and {@code
 * OMP_WAIT_POLICY=PASSIVE} is recommended in the environment (see RESULTS.md).
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
@Fork(
    value = 1,
    jvmArgsAppend = {
      "--add-modules",
      "jdk.incubator.vector",
      "-Xmx4g",
      "-Dorg.bytedeco.javacpp.maxphysicalbytes=6g",
      "-Dorg.nd4j.log.initialization=false"
    })
public class ModelInferenceBenchmark {

  /** Explanations on or off (on keeps every layer's attention weights). */
  @Param({"false", "true"})
  public boolean explain;

  private NodeClassifier classifier;
  private CsrGraph graph;
  private NodeFeatures features;

  /** Generates the demo network and loads the bundled model. */
  @Setup
  public void setUp() {
    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    graph = DemoGraph.build(payments);
    features =
        NodeFeatures.ofRowMajor(
            payments.features(), payments.accountCount(), payments.featureNames().size());
    AttentionModel model;
    try (InputStream in = DemoGraph.class.getResourceAsStream("payments-demo.heed")) {
      if (in == null) {
        throw new IllegalStateException("the bundled demo model is not on the class path");
      }
      model = ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    ClassifyOptions options = ClassifyOptions.defaults().withPath(PathChoice.SPARSE);
    classifier =
        NodeClassifier.of(
            model, explain ? options.withExplanations(3) : options.withoutExplanations());
  }

  /**
   * Classifies every account.
   *
   * @return the classification (consumed by JMH)
   */
  @Benchmark
  public Classification classifyAll() {
    return classifier.classify(graph, features);
  }
}
