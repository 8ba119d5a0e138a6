package dev.heed.bench.graph;

import dev.heed.graph.generate.RmatGenerator;
import java.io.BufferedOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.nio.file.Files;
import java.nio.file.Path;

/** Writes benchmark inputs: R-MAT edges as a tab-separated edge list of integer ids. */
final class EdgeFiles {

  /** R-MAT scale of the benchmark graph: 2^20 nodes. */
  static final int SCALE = 20;

  /** Edges in the benchmark file (the 10-million-edge reference case). */
  static final int EDGES = 10_000_000;

  /** Seed of the benchmark graph. */
  static final long SEED = 42;

  private EdgeFiles() {}

  /** Returns {sources, targets} of the benchmark R-MAT graph. */
  static int[][] rmatEdges() {
    int[] sources = new int[EDGES];
    int[] targets = new int[EDGES];
    RmatGenerator.withScale(SCALE).edgeCount(EDGES).seed(SEED).generateInto(sources, targets);
    return new int[][] {sources, targets};
  }

  /** Writes "source\ttarget\n" lines, with a header line and a comment line. */
  static void writeTsv(Path file, int[] sources, int[] targets) throws IOException {
    try (OutputStream out = new BufferedOutputStream(Files.newOutputStream(file), 1 << 16)) {
      out.write("# R-MAT graph, Graph500 initiator\nsource\ttarget\n".getBytes("US-ASCII"));
      byte[] line = new byte[32];
      for (int k = 0; k < sources.length; k++) {
        int p = put(line, 0, sources[k]);
        line[p++] = '\t';
        p = put(line, p, targets[k]);
        line[p++] = '\n';
        out.write(line, 0, p);
      }
    }
  }

  private static int put(byte[] b, int at, int v) {
    if (v == 0) {
      b[at] = '0';
      return at + 1;
    }
    int digits = 0;
    for (int x = v; x > 0; x /= 10) {
      digits++;
    }
    for (int i = at + digits - 1; i >= at; i--) {
      b[i] = (byte) ('0' + v % 10);
      v /= 10;
    }
    return at + digits;
  }
}
