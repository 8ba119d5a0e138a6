package dev.heed.cli;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonFactoryBuilder;
import com.fasterxml.jackson.core.JsonGenerator;
import com.fasterxml.jackson.core.StreamWriteFeature;
import dev.heed.classify.Classification;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.NodeIndex;
import java.io.IOException;
import java.io.Writer;
import java.util.List;

/**
 * Predictions as JSON Lines: one JSON object per prediction, each on its own line ending in {@code
 * \n}, UTF-8 on files. For example (one line in the file, wrapped here):
 *
 * <pre>
 * {"node":"acct-007","label":"mule-ring","probability":0.8125,
 *  "probabilities":{"ordinary":0.1,"merchant":0.0875,"mule-ring":0.8125},
 *  "explanation":[{"layer":"gat1","layer_index":0,"heads":4,
 *                  "neighbours":[{"node":"acct-003","weight":0.5}, ...]}, ...]}
 * </pre>
 *
 * {@code node} is the id as written in the input files; {@code label} and {@code probability} the
 * predicted label and its probability; {@code probabilities} holds every label's probability, keyed
 * by label, in the model's label order. {@code explanation} is present only when explanations were
 * requested: one entry per attention layer in model order, each with the layer's name, position and
 * head count, and the neighbours it weighted most (mean over heads), heaviest first. Numbers are
 * the float values as computed, written in their shortest exact form.
 *
 * <p>Thread safety: immutable; {@link #write} may run on several threads with separate writers.
 */
final class JsonLinesPredictions implements PredictionWriter {

  private static final JsonFactory JSON =
      new JsonFactoryBuilder()
          .disable(StreamWriteFeature.AUTO_CLOSE_TARGET)
          .rootValueSeparator((String) null)
          .build();

  private final NodeIndex<String> ids;

  JsonLinesPredictions(NodeIndex<String> ids) {
    this.ids = ids;
  }

  @Override
  public void write(Classification result, Writer out) throws IOException {
    List<String> labels = result.classLabels();
    try (JsonGenerator json = JSON.createGenerator(out)) {
      for (NodePrediction p : result.predictions()) {
        json.writeStartObject();
        json.writeStringField("node", ids.idOf(p.node()));
        json.writeStringField("label", p.label());
        json.writeNumberField("probability", p.probability());
        json.writeObjectFieldStart("probabilities");
        float[] probabilities = p.probabilities();
        for (int c = 0; c < probabilities.length; c++) {
          json.writeNumberField(labels.get(c), probabilities[c]);
        }
        json.writeEndObject();
        if (p.explanation().isPresent()) {
          json.writeArrayFieldStart("explanation");
          for (LayerExplanation layer : p.explanation().get()) {
            writeLayer(json, layer);
          }
          json.writeEndArray();
        }
        json.writeEndObject();
        json.writeRaw('\n');
      }
    }
    out.flush();
  }

  private void writeLayer(JsonGenerator json, LayerExplanation layer) throws IOException {
    json.writeStartObject();
    json.writeStringField("layer", layer.layerName());
    json.writeNumberField("layer_index", layer.layerIndex());
    json.writeNumberField("heads", layer.heads());
    json.writeArrayFieldStart("neighbours");
    for (NeighbourWeight w : layer.topNeighbours()) {
      json.writeStartObject();
      json.writeStringField("node", ids.idOf(w.node()));
      json.writeNumberField("weight", w.weight());
      json.writeEndObject();
    }
    json.writeEndArray();
    json.writeEndObject();
  }
}
