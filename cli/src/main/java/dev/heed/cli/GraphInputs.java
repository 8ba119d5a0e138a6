package dev.heed.cli;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.NodeIndex;
import dev.heed.graph.SelfLoopPolicy;
import java.io.IOException;
import java.nio.file.Path;
import java.util.List;

/**
 * A graph file and a features file read together, the same way for {@code heed classify} and {@code
 * heed train}: the graph with {@link GraphFileOptions}, the features with {@link FeatureFiles},
 * matched by id. Ids that only the features file names become nodes without edges after the graph's
 * nodes ({@link EdgelessNodes}).
 *
 * @param graph the graph, edgeless nodes included
 * @param nodes the node index, edgeless nodes included
 * @param features the features, row i for node i
 * @param featureNames the names a features header gave, or empty
 * @param featuresHow how rows were matched to nodes, for the summary
 * @param edgeLines the edge lines read from the graph file
 * @param edgeless the number of nodes only the features file names
 * @param graphSeconds time to read the graph
 * @param featureSeconds time to read and match the features
 */
record GraphInputs(
    CsrGraph graph,
    NodeIndex<String> nodes,
    NodeFeatures features,
    List<String> featureNames,
    String featuresHow,
    long edgeLines,
    int edgeless,
    double graphSeconds,
    double featureSeconds) {

  /** Reads both files; {@code featureIds} is the {@code --feature-ids} file or null. */
  static GraphInputs read(
      Path graphFile,
      Path featuresFile,
      Path featureIds,
      GraphFileOptions options,
      FeatureFiles.Expected expected,
      ProgressDisplay progress)
      throws IOException {
    ClassifyRun.requireFile(graphFile, "--graph");
    ClassifyRun.requireFile(featuresFile, "--features");
    long start = System.nanoTime();
    EdgeListResult<String> read = options.read(graphFile, progress);
    if (read.graph().nodeCount() == 0) {
      throw new CliException(graphFile + ": no edges in the file", HeedCli.EXIT_USER_ERROR);
    }
    long graphDone = System.nanoTime();
    FeatureFiles.Read rows =
        FeatureFiles.read(
            featuresFile, featureIds, options.delimiterSetting(), read.nodes(), expected, progress);
    List<String> extra;
    try {
      extra = rows.table().idsNotIn(read.nodes());
    } catch (IllegalArgumentException e) {
      throw new CliException(featuresFile + ": " + e.getMessage(), HeedCli.EXIT_USER_ERROR);
    }
    boolean selfLoops = options.selfLoopPolicy() == SelfLoopPolicy.ADD;
    CsrGraph graph = EdgelessNodes.extend(read.graph(), extra.size(), selfLoops);
    NodeIndex<String> nodes = EdgelessNodes.extend(read.nodes(), extra);
    NodeFeatures features =
        FeatureFiles.align(
            featuresFile, rows.table(), nodes, headerHint(graphFile, options, read, rows));
    return new GraphInputs(
        graph,
        nodes,
        features,
        rows.names(),
        rows.description(),
        read.edgeLines(),
        extra.size(),
        (graphDone - start) / 1e9,
        (System.nanoTime() - graphDone) / 1e9);
  }

  /**
   * When the graph's first line was read as an edge, its ids may be a header's column names that no
   * features row has: then say which option reads it as a header.
   */
  private static String headerHint(
      Path graphFile,
      GraphFileOptions options,
      EdgeListResult<String> read,
      FeatureFiles.Read rows) {
    if (options.headerUsed()
        || read.nodes().size() < 2
        || rows.table().ids().contains(read.nodes().idOf(0))
        || rows.table().ids().contains(read.nodes().idOf(1))) {
      return "";
    }
    return "; if line 1 of "
        + graphFile.getFileName()
        + " ('"
        + read.nodes().idOf(0)
        + "', '"
        + read.nodes().idOf(1)
        + "') is a header, add --edge-header yes";
  }
}
