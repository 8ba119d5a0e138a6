package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.model.ModelFile;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed classify} builds the graph the way the model file says its training graph was built:
 * by default with the recorded conventions, refusing other explicit ones unless overridden, and
 * warning when a model records none. A graph built another way gives other predictions with no
 * error, so these are the boundary's safeguards.
 */
class GraphPoliciesIT {

  private static final GraphPolicies DIRECTED =
      new GraphPolicies(DirectionPolicy.KEEP, SelfLoopPolicy.ADD, DuplicatePolicy.MERGE);

  @TempDir Path dir;

  private List<String> classify(Path model, String... extra) throws Exception {
    CliFixtures.Data data = CliFixtures.randomData(40, 60, 5, 20261204L);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    Path features = data.writeFeaturesCsv(dir.resolve("x.csv"), CliFixtures.MIXED_FEATURES);
    List<String> args =
        new ArrayList<>(
            List.of(
                "classify",
                "--model",
                model.toString(),
                "--graph",
                graph.toString(),
                "--features",
                features.toString(),
                "--no-progress"));
    args.addAll(List.of(extra));
    CliProcess.Result r = CliProcess.run(dir, args.toArray(String[]::new));
    return List.of(String.valueOf(r.exitCode()), r.stdout(), r.stderr());
  }

  private Path recordedModel(GraphPolicies conventions) throws Exception {
    Path plain = CliFixtures.mixedModel(dir);
    Path recorded = dir.resolve("recorded.heed");
    ModelFile.write(ModelFile.read(plain).withGraphPolicies(conventions), recorded);
    return recorded;
  }

  @Test
  void theRecordedConventionsAreTheDefault() throws Exception {
    Path model = recordedModel(DIRECTED);
    List<String> byDefault = classify(model);
    assertEquals("0", byDefault.get(0), byDefault.toString());
    assertTrue(byDefault.get(2).contains("directed"), byDefault.get(2));
    assertFalse(byDefault.get(2).contains("warning"), byDefault.get(2));
    // the same as asking for the recorded conventions explicitly
    List<String> explicit = classify(model, "--direction", "keep");
    assertEquals("0", explicit.get(0), explicit.toString());
    assertArrayEquals(
        byDefault.get(1).lines().toArray(), explicit.get(1).lines().toArray(), "stdout");
  }

  @Test
  void otherExplicitConventionsAreRefusedUnlessOverridden() throws Exception {
    Path model = recordedModel(DIRECTED);
    List<String> refused = classify(model, "--direction", "symmetrise");
    assertEquals(String.valueOf(HeedCli.EXIT_USER_ERROR), refused.get(0), refused.toString());
    assertTrue(refused.get(2).contains("direction: symmetrise instead of keep"), refused.get(2));
    assertTrue(refused.get(2).contains("--override-graph-policies"), refused.get(2));
    assertTrue(refused.get(1).isEmpty(), "no predictions on refusal: " + refused.get(1));

    List<String> overridden =
        classify(model, "--direction", "symmetrise", "--override-graph-policies");
    assertEquals("0", overridden.get(0), overridden.toString());
    assertTrue(overridden.get(2).contains("warning: building the graph unlike"), overridden.get(2));
  }

  @Test
  void aModelThatRecordsNoneIsClassifiedWithAWarning() throws Exception {
    List<String> r = classify(CliFixtures.mixedModel(dir));
    assertEquals("0", r.get(0), r.toString());
    assertTrue(
        r.get(2).contains("the model does not record how its training graph was built"), r.get(2));
  }
}
