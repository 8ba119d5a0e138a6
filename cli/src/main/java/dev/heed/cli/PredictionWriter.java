package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.graph.NodeIndex;
import java.io.IOException;
import java.io.Writer;

/**
 * Writes the predictions of one classify call in one file format: objects in, characters out. The
 * caller owns the writer (it is flushed, not closed).
 */
interface PredictionWriter {

  /**
   * Writes every prediction of {@code result}, in its order.
   *
   * @param result the predictions (not modified)
   * @param out where the text goes; flushed at the end, not closed
   * @throws IOException if writing fails
   */
  void write(Classification result, Writer out) throws IOException;

  /**
   * Returns the writer for a format.
   *
   * @param format the file format
   * @param ids the node ids, to write nodes by their ids in the input files
   * @param explainK neighbours per explanation requested from the classifier (0: none); CSV writes
   *     exactly this many pairs per line
   * @return a writer; it keeps no state between calls
   */
  static PredictionWriter of(OutputFormat format, NodeIndex<String> ids, int explainK) {
    return switch (format) {
      case CSV -> new CsvPredictions(ids, explainK);
      case JSONL -> new JsonLinesPredictions(ids);
    };
  }
}
