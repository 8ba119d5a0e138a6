package dev.heed.cli;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonFactoryBuilder;
import com.fasterxml.jackson.core.JsonGenerator;
import com.fasterxml.jackson.core.StreamWriteFeature;
import java.io.IOException;
import java.io.Writer;
import java.util.List;

/**
 * Writes the score changes of {@code heed replay} in one file format: objects in, characters out,
 * with the conventions of {@code heed classify}'s predictions ({@link CsvPredictions}, {@link
 * JsonLinesPredictions}). The caller owns the writer (flushed, not closed).
 *
 * <p>CSV: header {@code batch,version,time,node,old_label,label,probability,p_LABEL1,...}, one line
 * per change; {@code old_label} is the label last written for the node (or held at the start),
 * empty for a node the stream added; numbers with six decimals; fields quoted as RFC 4180 says.
 * JSON Lines: {@code {"batch":B,"version":V,"time":T,"node":ID,"old_label":L|null,"label":L,
 * "probability":P,"probabilities":{LABEL:P,...}}}, floats in their shortest exact form.
 */
interface ScoreChangeWriter {

  /**
   * One changed score.
   *
   * @param batch the batch's number, from 1
   * @param version the graph version the score reflects
   * @param time the time of the batch's last event
   * @param node the node's id
   * @param oldLabel the label before, or null for a new node
   * @param score the fresh score
   */
  record Change(
      int batch, long version, double time, String node, String oldLabel, NodeScore score) {}

  /** Writes the header, if the format has one. */
  void begin(List<String> labels) throws IOException;

  /** Writes one change. */
  void write(Change change) throws IOException;

  /** Returns the writer for a format, writing to {@code out}. */
  static ScoreChangeWriter of(OutputFormat format, Writer out) {
    return switch (format) {
      case CSV -> new Csv(out);
      case JSONL -> new JsonLines(out);
    };
  }

  /** The CSV form. */
  final class Csv implements ScoreChangeWriter {
    private final Writer out;
    private final StringBuilder line = new StringBuilder();

    Csv(Writer out) {
      this.out = out;
    }

    @Override
    public void begin(List<String> labels) throws IOException {
      line.setLength(0);
      line.append("batch,version,time,node,old_label,label,probability");
      for (String label : labels) {
        line.append(',').append(TextFields.csv(CsvPredictions.PROBABILITY_PREFIX + label));
      }
      out.write(line.append('\n').toString());
    }

    @Override
    public void write(Change c) throws IOException {
      NodeScore p = c.score();
      line.setLength(0);
      line.append(c.batch())
          .append(',')
          .append(c.version())
          .append(',')
          .append(StreamFile.decimal(c.time()))
          .append(',')
          .append(TextFields.csv(c.node()))
          .append(',')
          .append(c.oldLabel() == null ? "" : TextFields.csv(c.oldLabel()))
          .append(',');
      CsvPredictions.appendScores(line, p.label(), p.probability(), p.probabilities());
      out.write(line.append('\n').toString());
    }
  }

  /** The JSON Lines form. */
  final class JsonLines implements ScoreChangeWriter {
    private static final JsonFactory JSON =
        new JsonFactoryBuilder()
            .disable(StreamWriteFeature.AUTO_CLOSE_TARGET)
            .disable(StreamWriteFeature.FLUSH_PASSED_TO_STREAM)
            .rootValueSeparator((String) null)
            .build();

    private final Writer out;
    private JsonGenerator json;
    private List<String> labels;

    JsonLines(Writer out) {
      this.out = out;
    }

    @Override
    public void begin(List<String> labels) throws IOException {
      this.labels = List.copyOf(labels);
      this.json = JSON.createGenerator(out);
    }

    @Override
    public void write(Change c) throws IOException {
      NodeScore p = c.score();
      json.writeStartObject();
      json.writeNumberField("batch", c.batch());
      json.writeNumberField("version", c.version());
      json.writeNumberField("time", c.time());
      json.writeStringField("node", c.node());
      json.writeStringField("old_label", c.oldLabel());
      json.writeStringField("label", p.label());
      json.writeNumberField("probability", p.probability());
      json.writeObjectFieldStart("probabilities");
      float[] probabilities = p.probabilities();
      for (int k = 0; k < probabilities.length; k++) {
        json.writeNumberField(labels.get(k), probabilities[k]);
      }
      json.writeEndObject();
      json.writeEndObject();
      json.writeRaw('\n');
      json.flush();
    }
  }
}
