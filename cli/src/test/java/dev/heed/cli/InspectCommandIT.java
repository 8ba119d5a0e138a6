package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code heed inspect} through the real jar, on attention-core's fixture model. */
class InspectCommandIT {

  @TempDir Path dir;

  @Test
  void describesTheFixtureModel() throws Exception {
    Path model = CliFixtures.mixedModel(dir);
    CliProcess.Result r = CliProcess.run(dir, "inspect", "--model", model.toString());
    assertEquals(0, r.exitCode(), r.toString());
    String out = r.stdout();
    assertTrue(out.contains("format: heed-model version 1"), out);
    assertTrue(out.contains("input features: 5 [f0, f1, f2, f3, f4]"), out);
    assertTrue(out.contains("class labels: 3 [alpha, beta, gamma]"), out);
    assertTrue(out.contains("layers: 6"), out);
    // gat1 (docs/model-format.md): weight [5, 12], attention vectors [3, 4] twice, bias [12],
    // residual weight [5, 12]: 60 + 12 + 12 + 12 + 60 = 156 parameters.
    assertTrue(
        out.lines()
            .anyMatch(
                l ->
                    l.contains("gat1")
                        && l.contains("graph_attention")
                        && l.contains("5 -> 12")
                        && l.trim().endsWith(" 156")),
        out);
    assertTrue(out.contains("weight [5, 12], attention_target [3, 4]"), out);
    assertTrue(out.lines().anyMatch(l -> l.contains("full") && l.contains("self_attention")), out);
    assertTrue(
        out.lines().anyMatch(l -> l.contains("probabilities") && l.contains("softmax")), out);
    // Sum of the fixture's tensor sizes (the .npy entries of mixed.heed).
    assertTrue(out.contains("parameters: 2,395 (float32, 9,580 bytes)"), out);
    // the check vectors docs/export_model.py wrote (its 8-node sample graph)
    assertTrue(out.contains("check vectors: 8 nodes, 23 entries, tolerance 1.0e-04"), out);
  }

  @Test
  void notAModelIsAOneLineError() throws Exception {
    Path notModel = Files.writeString(dir.resolve("x.heed"), "source,target\na,b\n");
    CliProcess.Result r = CliProcess.run(dir, "inspect", "--model", notModel.toString());
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("heed: error: x.heed"), r.toString());
    r = CliProcess.run(dir, "inspect", "--model", dir.resolve("none.heed").toString());
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("--model: file not found"), r.toString());
    r = CliProcess.run(dir, "inspect");
    assertEquals(HeedCli.EXIT_USAGE, r.exitCode(), r.toString());
  }
}
