package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.NodeIndex;
import java.io.IOException;
import java.io.Writer;
import java.util.List;

/**
 * Predictions as CSV: a header line, then one line per prediction with the columns
 *
 * <pre>
 *   node, label, probability, p_LABEL1, ..., p_LABELC [, neighbour_1, weight_1, ..., neighbour_K, weight_K]
 * </pre>
 *
 * {@code node} is the id as written in the input files, {@code label} the predicted (most probable)
 * label and {@code probability} its probability; then one column per class label in the model's
 * order, named {@code p_} followed by the label text, holding that label's probability. Labels are
 * distinct and no fixed column starts with {@code p_}, so every column name is unique. With
 * explanations, K pairs name the neighbours the model's last attention layer weighted most (mean
 * over heads), heaviest first; a node with fewer than K neighbours has empty fields. Numbers have
 * six decimals. Fields holding a comma, double quote or line break (ids and labels can hold
 * anything) are quoted with RFC 4180 rules: in double quotes, inner quotes doubled.
 *
 * <p>Thread safety: immutable; {@link #write} may run on several threads with separate writers.
 */
final class CsvPredictions implements PredictionWriter {

  /** Prefix of the per-label probability columns. */
  static final String PROBABILITY_PREFIX = "p_";

  private final NodeIndex<String> ids;
  private final int explainK;

  CsvPredictions(NodeIndex<String> ids, int explainK) {
    this.ids = ids;
    this.explainK = explainK;
  }

  @Override
  public void write(Classification result, Writer out) throws IOException {
    StringBuilder line = new StringBuilder("node,label,probability");
    for (String label : result.classLabels()) {
      line.append(',').append(TextFields.csv(PROBABILITY_PREFIX + label));
    }
    for (int k = 1; k <= explainK; k++) {
      line.append(",neighbour_").append(k).append(",weight_").append(k);
    }
    out.write(line.append('\n').toString());
    for (NodePrediction p : result.predictions()) {
      line.setLength(0);
      line.append(TextFields.csv(ids.idOf(p.node()))).append(',');
      appendScores(line, p);
      if (explainK > 0) {
        List<NeighbourWeight> top = ClassifyRun.lastLayerNeighbours(p);
        for (int k = 0; k < explainK; k++) {
          if (k < top.size()) {
            line.append(',').append(TextFields.csv(ids.idOf(top.get(k).node()))).append(',');
            SixDecimals.append(line, top.get(k).weight());
          } else {
            line.append(",,");
          }
        }
      }
      out.write(line.append('\n').toString());
    }
    out.flush();
  }

  /** Appends {@code label,probability,p_1,...,p_C} of a prediction, numbers with six decimals. */
  static void appendScores(StringBuilder line, NodePrediction p) {
    appendScores(line, p.label(), p.probability(), p.probabilities());
  }

  /** Appends {@code label,probability,p_...} for a top label and every class probability. */
  static void appendScores(
      StringBuilder line, String label, float probability, float[] probabilities) {
    line.append(TextFields.csv(label)).append(',');
    SixDecimals.append(line, probability);
    for (float each : probabilities) {
      SixDecimals.append(line.append(','), each);
    }
  }
}
