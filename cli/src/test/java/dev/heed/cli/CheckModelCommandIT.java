package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.model.ModelFile;
import dev.heed.npy.NpyArray;
import dev.heed.npy.Npz;
import dev.heed.npy.NpzContents;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.function.Consumer;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed check-model} through the real jar, on attention-core's fixture model, whose check
 * vectors docs/export_model.py computed with its own NumPy forward pass.
 */
class CheckModelCommandIT {

  @TempDir Path dir;

  @Test
  void reportsTheDeviationOnEveryPath() throws Exception {
    Path model = CliFixtures.mixedModel(dir);
    CliProcess.Result r = CliProcess.run(dir, "check-model", "--model", model.toString());
    assertEquals(0, r.exitCode(), r.toString());
    String out = r.stdout();
    assertTrue(out.contains("check vectors: 8 nodes, 23 entries, tolerance 1.0e-04"), out);
    assertTrue(out.contains("expected values from docs/export_model.py"), out);
    for (String run : new String[] {"reference", "sparse", "dense"}) {
      assertTrue(
          out.lines().anyMatch(l -> l.startsWith(run) && l.contains(" ok ")), run + ":\n" + out);
    }
    assertTrue(!out.contains("FAILED"), out);
  }

  /** Target and source weights of the GATv2 layer mixed up: both [12, 12], so shapes pass. */
  @Test
  void aWeightMixUpFailsWithTheDeviation() throws Exception {
    Path model =
        edited(d -> {}, a -> a.put("gat2.target_weight", a.get("gat2.source_weight")), "mixup");
    CliProcess.Result r = CliProcess.run(dir, "check-model", "--model", model.toString());
    assertEquals(HeedCli.EXIT_VERIFY_FAILED, r.exitCode(), r.toString());
    assertTrue(r.stdout().lines().anyMatch(l -> l.startsWith("reference") && l.contains("FAILED")));
    assertTrue(r.stderr().contains("does not reproduce its check vectors"), r.toString());
    assertTrue(r.stderr().contains("Weight layout"), r.toString());

    r = CliProcess.run(dir, "inspect", "--model", model.toString());
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("largest deviation"), r.toString());
  }

  @Test
  void aModelWithoutCheckVectorsSaysSo() throws Exception {
    Path model =
        edited(
            d -> d.remove("checks"),
            a -> a.keySet().removeIf(name -> name.startsWith("checks/")),
            "plain");
    CliProcess.Result r = CliProcess.run(dir, "check-model", "--model", model.toString());
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stdout().contains("check vectors: none"), r.toString());
    r = CliProcess.run(dir, "inspect", "--model", model.toString());
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stdout().contains("check vectors: none"), r.toString());
  }

  /** The fixture model with its description and tensors edited. */
  private Path edited(
      Consumer<ObjectNode> description, Consumer<Map<String, NpyArray>> arrays, String name)
      throws Exception {
    NpzContents contents = Npz.read(CliFixtures.mixedModel(dir));
    ObjectMapper json = new ObjectMapper();
    ObjectNode d =
        (ObjectNode) json.readTree(contents.otherEntry(ModelFile.DESCRIPTION_ENTRY).orElseThrow());
    description.accept(d);
    Map<String, NpyArray> a = new LinkedHashMap<>(contents.arrays());
    arrays.accept(a);
    Path file = dir.resolve(name + ".heed");
    Files.write(
        file, Npz.toBytes(Map.of(ModelFile.DESCRIPTION_ENTRY, json.writeValueAsBytes(d)), a));
    return file;
  }
}
