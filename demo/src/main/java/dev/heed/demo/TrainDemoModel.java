package dev.heed.demo;

import dev.heed.graph.CsrGraph;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;

/**
 * Trains the bundled demo model and writes it: {@code java dev.heed.demo.TrainDemoModel [--out
 * FILE] [--baseline]}. Generates {@link PaymentsNetworkGenerator#bundledDemo()}, builds {@link
 * DemoGraph}, trains {@link DemoTraining#gat} and prints the training report and the TEST split's
 * accuracy and per-role recall; with {@code --baseline} also trains the features-only network for
 * comparison. Default output: {@value #DEFAULT_OUT}.
 */
public final class TrainDemoModel {

  /** Where the committed model lives in the source tree (run from the repository root). */
  public static final String DEFAULT_OUT =
      "demo/src/main/resources/dev/heed/demo/payments-demo.heed";

  private TrainDemoModel() {}

  /**
   * Entry point.
   *
   * @param args {@code [--out FILE] [--baseline]}
   * @throws IOException if the model cannot be written
   */
  public static void main(String[] args) throws IOException {
    Path out = Path.of(DEFAULT_OUT);
    boolean baseline = false;
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--out" -> out = Path.of(args[++i]);
        case "--baseline" -> baseline = true;
        default ->
            throw new IllegalArgumentException(
                "unknown argument '"
                    + args[i]
                    + "'; usage: TrainDemoModel [--out FILE] [--baseline]");
      }
    }
    long started = System.nanoTime();
    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    CsrGraph graph = DemoGraph.build(payments);
    System.out.printf(
        Locale.ROOT,
        "network: %s%ngraph: %d nodes, %d entries (symmetrised, self-loops, merged); %.1f s%n",
        payments,
        graph.nodeCount(),
        graph.entryCount(),
        (System.nanoTime() - started) / 1e9);
    DemoTraining.Outcome gat =
        DemoTraining.train(
            DemoTraining.gat(payments.featureNames().size()),
            payments,
            graph,
            p -> System.out.println("  " + p));
    System.out.println("GAT: " + gat.report());
    System.out.println("GAT held out: " + gat.test());
    if (out.getParent() != null) {
      Files.createDirectories(out.getParent());
    }
    gat.writeModel(out);
    System.out.printf(Locale.ROOT, "wrote %s (%d bytes)%n", out, Files.size(out));
    if (baseline) {
      DemoTraining.Outcome mlp =
          DemoTraining.train(
              DemoTraining.featuresOnly(payments.featureNames().size()), payments, graph, p -> {});
      System.out.println("features-only: " + mlp.report());
      System.out.println("features-only held out: " + mlp.test());
    }
  }
}
