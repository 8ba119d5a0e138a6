package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Files;
import java.nio.file.Path;
import java.util.SplittableRandom;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed train} through the real jar: a small two-community graph of our own (invented data),
 * trained, inspected and used for classification; and the error paths.
 */
class TrainCommandIT {

  private static final int NODES = 40;

  @TempDir Path dir;

  private Path graph;
  private Path features;
  private Path labels;

  @BeforeEach
  void writeFiles() throws Exception {
    SplittableRandom random = new SplittableRandom(2026);
    StringBuilder edges = new StringBuilder("source,target\n");
    for (int i = 0; i < NODES; i++) {
      for (int k = 0; k < 4; k++) {
        // mostly within the node's own community (ids below or above NODES / 2)
        int base = i < NODES / 2 ? 0 : NODES / 2;
        int j =
            random.nextDouble() < 0.9 ? base + random.nextInt(NODES / 2) : random.nextInt(NODES);
        if (j != i) {
          edges.append("n").append(i).append(',').append("n").append(j).append('\n');
        }
      }
    }
    graph = Files.writeString(dir.resolve("edges.csv"), edges.toString());
    StringBuilder rows = new StringBuilder("id,x0,x1\n");
    for (int i = 0; i < NODES; i++) {
      double shift =
          i < NODES / 2 ? 0.3 : -0.3; // a weak feature signal; the graph carries the rest
      rows.append("n")
          .append(i)
          .append(',')
          .append((float) (shift + random.nextGaussian()))
          .append(',')
          .append((float) random.nextGaussian())
          .append('\n');
    }
    features = Files.writeString(dir.resolve("features.csv"), rows.toString());
    StringBuilder l = new StringBuilder("id,label,split\n");
    for (int i = 0; i < NODES; i++) {
      String label = i < NODES / 2 ? "left" : "right";
      String split = i % 5 == 0 ? "train" : i % 5 == 1 ? "validation" : "test";
      l.append("n").append(i).append(',').append(label).append(',').append(split).append('\n');
    }
    labels = Files.writeString(dir.resolve("labels.csv"), l.toString());
  }

  @Test
  void trainsAModelThatInspectAndClassifyRead() throws Exception {
    Path model = dir.resolve("model.heed");
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "train",
            "--graph",
            graph.toString(),
            "--edge-header",
            "yes",
            "--direction",
            "symmetrise",
            "--features",
            features.toString(),
            "--labels",
            labels.toString(),
            "--epochs",
            "30",
            "--heads",
            "2",
            "--head-width",
            "4",
            "--seed",
            "7",
            "--no-progress",
            "--out",
            model.toString());
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(Files.size(model) > 0, r.toString());
    assertFalse(r.stderr().contains("Exception"), r.toString());

    CliProcess.Result inspect = CliProcess.run(dir, "inspect", "--model", model.toString());
    assertEquals(0, inspect.exitCode(), inspect.toString());
    assertTrue(
        inspect.stdout().contains("left") && inspect.stdout().contains("right"),
        inspect.toString());

    CliProcess.Result classify =
        CliProcess.run(
            dir,
            "classify",
            "--model",
            model.toString(),
            "--graph",
            graph.toString(),
            "--features",
            features.toString());
    assertEquals(0, classify.exitCode(), classify.toString());
    long predictions =
        classify.stdout().lines().filter(line -> line.matches("n\\d+,(left|right),.*")).count();
    assertEquals(NODES, predictions, classify.toString());
  }

  @Test
  void helpNamesEveryValueWithoutFieldNames() throws Exception {
    CliProcess.Result help = CliProcess.run(dir, "train", "--help");
    assertEquals(0, help.exitCode(), help.toString());
    assertTrue(help.stdout().contains("--head-width=N"), help.toString());
    assertTrue(help.stdout().contains("--learning-rate=RATE"), help.toString());
    // picocli's default labels are the Java field names in angle brackets
    assertFalse(help.stdout().contains("=<"), help.toString());
  }

  @Test
  void labelsHeaderWithItsOwnColumnNamesAndTheSharedGraphDefaults() throws Exception {
    Path named =
        Files.writeString(
            dir.resolve("roles.csv"),
            Files.readString(labels).replace("id,label,split\n", "account,role,split\r\n"));
    Path model = dir.resolve("model.heed");
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "train",
            "--graph",
            graph.toString(),
            "--features",
            features.toString(),
            "--labels",
            named.toString(),
            "--epochs",
            "3",
            "--no-progress",
            "--out",
            model.toString());
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(
        r.stdout().contains("labels: line 1 read as a header [account, role, split]"),
        r.toString());
    // classify's defaults, stated in the report: symmetrised, self-loops added, merged
    assertTrue(
        r.stdout().contains("graph 40 nodes")
            && r.stdout().contains("(symmetrised, self-loops added, duplicates merged)"),
        r.toString());
  }

  @Test
  void missingGraphFileIsOneLineError() throws Exception {
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "train",
            "--graph",
            dir.resolve("absent.csv").toString(),
            "--features",
            features.toString(),
            "--labels",
            labels.toString(),
            "--no-progress",
            "--out",
            dir.resolve("m.heed").toString());
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    assertTrue(
        r.stderr().contains("heed: error:") && r.stderr().contains("absent.csv"), r.toString());
    assertFalse(r.stderr().contains("\tat "), "no stack trace without --debug:\n" + r);
  }

  @Test
  void labelForAnUnknownNodeIsRejected() throws Exception {
    Path badLabels =
        Files.writeString(dir.resolve("bad-labels.csv"), "id,label\nn0,left\nnobody,right\n");
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "train",
            "--graph",
            graph.toString(),
            "--edge-header",
            "yes",
            "--direction",
            "keep",
            "--features",
            features.toString(),
            "--labels",
            badLabels.toString(),
            "--no-progress",
            "--out",
            dir.resolve("m.heed").toString());
    assertNotEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("heed: error:") && r.stderr().contains("nobody"), r.toString());
    assertFalse(r.stderr().contains("\tat "), "no stack trace without --debug:\n" + r);
  }

  @Test
  void noInputsAndNoDemoIsAnError() throws Exception {
    CliProcess.Result r =
        CliProcess.run(dir, "train", "--no-progress", "--out", dir.resolve("m.heed").toString());
    assertNotEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("heed: error:") || r.stderr().contains("Missing"), r.toString());
  }
}
