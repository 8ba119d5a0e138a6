package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.classify.NodePrediction;
import dev.heed.demo.DemoFiles;
import dev.heed.model.PathChoice;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.Writer;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * {@code heed replay --demo}: replays the demo stream (an invented hour in which a new mule ring
 * forms) over the demo network with the demo model, through the same code path as any files, and
 * tells when each account the stream opens was scored {@value DemoRun#EXPLAINED_LABEL}, and how
 * many existing accounts moved to or from that label.
 */
final class DemoReplay {

  private final PrintWriter out;
  private final PrintWriter err;

  DemoReplay(PrintWriter out, PrintWriter err) {
    this.out = out;
    this.err = err;
  }

  /**
   * What the demo watches about one account: when it held the flagged label, and its last score.
   */
  private static final class Watch {
    double firstFlagged = Double.NaN;
    double flaggedSince = Double.NaN;
    String label = "";
    float flaggedProbability;
  }

  int run(
      Path directory,
      Path modelFile,
      PathChoice path,
      Integer threads,
      Replay.Batching batching,
      double minChange,
      Path changesOut,
      OutputFormat format)
      throws IOException {
    DemoRun.Named named = DemoRun.model(modelFile);
    DemoFiles files = DemoRun.files(directory);
    ClassifyRun run = DemoRun.load(named, files, threads);
    List<String> labels = run.model().classLabels();
    int flagged =
        labels.contains(DemoRun.EXPLAINED_LABEL)
            ? labels.indexOf(DemoRun.EXPLAINED_LABEL)
            : labels.size() - 1;
    String flaggedName = labels.get(flagged);
    List<StreamFile.Event> events =
        StreamFile.read(
            files.stream(), run.model().featureNames(), run.model().inputFeatureCount());
    Map<String, String[]> opened = readStreamAccounts(files.streamAccounts());
    Map<String, Watch> watched = new HashMap<>();
    int startNodes = run.graph().nodeCount();
    int[] startLabels = new int[startNodes];
    Arrays.fill(startLabels, -1);
    int[] lastLabels = new int[startNodes];
    Replay replay = ReplayCommand.replayOf(run, path, GraphFileOptions.demo());
    Replay.BatchListener listener =
        new Replay.BatchListener() {
          @Override
          public void started(Classification start) {
            for (NodePrediction p : start.predictions()) {
              startLabels[p.node()] = p.labelIndex();
              lastLabels[p.node()] = p.labelIndex();
            }
          }

          @Override
          public void batchDone(
              int batch,
              double time,
              dev.heed.live.LiveSnapshot<String> snapshot,
              int[] affected,
              List<NodeScore> scores) {
            for (NodeScore p : scores) {
              String id = snapshot.nodes().idOf(p.node());
              if (p.node() < startNodes) {
                lastLabels[p.node()] = p.labelIndex();
                continue;
              }
              Watch w = watched.computeIfAbsent(id, k -> new Watch());
              boolean isFlagged = p.labelIndex() == flagged;
              if (isFlagged && Double.isNaN(w.firstFlagged)) {
                w.firstFlagged = time;
              }
              if (isFlagged && Double.isNaN(w.flaggedSince)) {
                w.flaggedSince = time;
              } else if (!isFlagged) {
                w.flaggedSince = Double.NaN;
              }
              w.label = p.label();
              w.flaggedProbability = p.probabilities()[flagged];
            }
          }
        };
    Replay.Summary summary;
    long started = System.nanoTime();
    try (Writer w =
        changesOut == null
            ? Writer.nullWriter()
            : ClassifyOutputOptions.openFile(changesOut, "--out")) {
      summary =
          replay.run(
              files.stream(),
              events,
              batching,
              minChange,
              ScoreChangeWriter.of(format, w),
              ProgressDisplay.off(),
              listener);
    }
    double seconds = (System.nanoTime() - started) / 1e9;
    Replay.printSummary(summary, files.stream().getFileName().toString(), batching, err);

    out.printf(
        Locale.ROOT,
        "Heed live demo (synthetic data): an invented hour of new transfers over the demo"
            + " network, replayed in %,d batches (%s) in %.1f s%n",
        summary.batches(),
        batching.describe(),
        seconds);
    out.printf(Locale.ROOT, "  model: %s; files: %s%n", named.name(), files.directory());
    out.println();
    printAccounts(
        "The new mule ring ("
            + opened.values().stream().filter(r -> r[0].equals("mule-ring")).count()
            + " accounts opening from minute 10):",
        "mule-ring",
        opened,
        watched,
        flaggedName);
    double allSince = Double.NEGATIVE_INFINITY;
    int ringSize = 0;
    for (Map.Entry<String, String[]> e : opened.entrySet()) {
      if (e.getValue()[0].equals("mule-ring")) {
        ringSize++;
        Watch w = watched.get(e.getKey());
        allSince = Math.max(allSince, w == null ? Double.NaN : w.flaggedSince);
      }
    }
    out.println(
        Double.isNaN(allSince) || ringSize == 0
            ? "Not every ring account is scored " + flaggedName + " at the end."
            : String.format(
                Locale.ROOT,
                "All %d ring accounts are scored %s from %s on, to the end of the stream.",
                ringSize,
                flaggedName,
                clock(allSince)));
    out.println();
    printAccounts("New ordinary customers:", "ordinary", opened, watched, flaggedName);
    int toFlag = 0;
    int fromFlag = 0;
    for (int i = 0; i < startNodes; i++) {
      toFlag += startLabels[i] != flagged && lastLabels[i] == flagged ? 1 : 0;
      fromFlag += startLabels[i] == flagged && lastLabels[i] != flagged ? 1 : 0;
    }
    out.printf(
        Locale.ROOT,
        "Existing accounts: %,d scored %s at the end that were not at the start, %,d no longer;"
            + " of %,d.%n",
        toFlag,
        flaggedName,
        fromFlag,
        startNodes);
    if (changesOut != null) {
      out.printf(
          Locale.ROOT,
          "Score changes (%,d) written to %s.%n",
          summary.changesWritten(),
          changesOut);
    }
    out.println();
    out.println(DemoRun.CAUTION);
    out.flush();
    return 0;
  }

  private void printAccounts(
      String title,
      String role,
      Map<String, String[]> opened,
      Map<String, Watch> watched,
      String flaggedName) {
    out.println(title);
    out.printf(
        Locale.ROOT,
        "  %-12s %-7s %-14s %-14s %-10s %s%n",
        "account",
        "opened",
        "first " + flaggedName,
        flaggedName + " since",
        "at the end",
        "p(" + flaggedName + ")");
    List<String> ids = new ArrayList<>();
    opened.forEach(
        (id, r) -> {
          if (r[0].equals(role)) {
            ids.add(id);
          }
        });
    ids.sort(null);
    for (String id : ids) {
      Watch w = watched.getOrDefault(id, new Watch());
      out.printf(
          Locale.ROOT,
          "  %-12s %-7s %-14s %-14s %-10s %.3f%n",
          id,
          clock(Double.parseDouble(opened.get(id)[1])),
          clock(w.firstFlagged),
          clock(w.flaggedSince),
          w.label,
          w.flaggedProbability);
    }
    out.println();
  }

  /** Minutes and seconds from the stream's start; a dash for never. */
  static String clock(double seconds) {
    if (Double.isNaN(seconds)) {
      return "-";
    }
    long s = (long) Math.floor(seconds);
    return String.format(Locale.ROOT, "%02d:%02d", s / 60, s % 60);
  }

  /** Reads stream-accounts.csv ("account,role,opened"): id to {role, opened}. */
  private static Map<String, String[]> readStreamAccounts(Path file) throws IOException {
    Map<String, String[]> accounts = new java.util.LinkedHashMap<>();
    TextFields.readRows(
        file,
        ',',
        row -> {
          List<String> f = row.fields();
          if (f.size() != 3) {
            throw StreamFile.error(file, row.line(), "expected account,role,opened");
          }
          if (!f.get(0).equals("account")) {
            accounts.put(f.get(0), new String[] {f.get(1), f.get(2)});
          }
        });
    return accounts;
  }
}
