package dev.heed.cli;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.heed.model.AttentionModel;
import dev.heed.model.Layer;
import dev.heed.model.ModelFile;
import dev.heed.npy.NpyArray;
import dev.heed.npy.Npz;
import dev.heed.npy.NpzContents;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code heed inspect}: validates a model file (the full reader runs first, check vectors included)
 * and prints its format version, input features, class labels, layers with their tensors' shapes
 * and parameter counts, and whether it carries check vectors.
 */
@Command(
    name = "inspect",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    description =
        "Describe a model file: format version, features, labels, layers, tensor shapes,"
            + " parameter counts and check vectors. The file is fully validated first.")
final class InspectCommand implements Callable<Integer> {

  @Spec CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(names = "--model", paramLabel = "FILE", required = true, description = "Model file.")
  Path model;

  @Override
  public Integer call() throws IOException {
    ClassifyRun.requireFile(model, "--model");
    AttentionModel m = ModelFile.read(model);
    // The model is valid; read the archive again for what the model object does not carry (the
    // file's format version and each layer's tensors).
    NpzContents contents = Npz.read(model);
    JsonNode description =
        new ObjectMapper()
            .readTree(
                new String(
                    contents.otherEntry(ModelFile.DESCRIPTION_ENTRY).orElseThrow(),
                    StandardCharsets.UTF_8));
    Map<String, NpyArray> arrays = contents.arrays();
    PrintWriter out = spec.commandLine().getOut();
    out.printf("model: %s%n", model);
    out.printf(
        "format: %s version %d%n",
        description.path("format").asText(), description.path("format_version").asInt());
    out.printf(
        "input features: %d%s%n",
        m.inputFeatureCount(), m.featureNames().isEmpty() ? " (unnamed)" : " " + m.featureNames());
    out.printf("class labels: %d %s%n", m.classLabels().size(), m.classLabels());
    out.printf("layers: %d%n", m.layers().size());
    out.printf(
        "  %-3s %-20s %-16s %-13s %5s %11s%n",
        "#", "name", "kind", "in -> out", "heads", "parameters");
    long total = 0;
    JsonNode layers = description.path("layers");
    for (int i = 0; i < m.layers().size(); i++) {
      Layer layer = m.layers().get(i);
      List<String> shapes = new ArrayList<>();
      long parameters = 0;
      JsonNode tensors = layers.path(i).path("tensors");
      for (Iterator<Map.Entry<String, JsonNode>> it = tensors.fields(); it.hasNext(); ) {
        Map.Entry<String, JsonNode> t = it.next();
        NpyArray a = arrays.get(t.getValue().asText());
        if (a != null) {
          parameters += a.elementCount();
          shapes.add(t.getKey() + " " + shape(a.shape()));
        }
      }
      total += parameters;
      out.printf(
          Locale.ROOT,
          "  %-3d %-20s %-16s %-13s %5s %,11d%n",
          i,
          layer.name(),
          layer.kind(),
          layer.inputWidth() + " -> " + layer.outputWidth(),
          layer.attentionHeads() > 0 ? Integer.toString(layer.attentionHeads()) : "-",
          parameters);
      if (!shapes.isEmpty()) {
        out.printf("      tensors: %s%n", String.join(", ", shapes));
      }
    }
    out.printf(Locale.ROOT, "parameters: %,d (float32, %,d bytes)%n", total, 4 * total);
    out.println(
        m.checks()
            .map(
                c ->
                    CheckModelCommand.describe(c)
                        + String.format(
                            Locale.ROOT,
                            "; largest deviation %.2e on the float64 reference",
                            c.compareWithReference(m).largest()))
            .orElse("check vectors: none"));
    out.flush();
    return 0;
  }

  private static String shape(int[] shape) {
    StringBuilder s = new StringBuilder("[");
    for (int i = 0; i < shape.length; i++) {
      s.append(i == 0 ? "" : ", ").append(shape[i]);
    }
    return s.append(']').toString();
  }
}
