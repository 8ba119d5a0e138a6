package dev.heed.spark.bench;

import dev.heed.attention.KernelOptions;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.Activation;
import dev.heed.model.AttentionModel;
import dev.heed.model.GraphAttentionLayer;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.model.SoftmaxLayer;
import dev.heed.npy.NpyLimits;
import dev.heed.spark.SparkNodeClassifier;
import dev.heed.spark.SparkScores;
import java.io.InputStream;
import java.io.PrintStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.ConcurrentHashMap;
import java.util.function.IntFunction;
import org.apache.spark.api.java.function.MapPartitionsFunction;
import org.apache.spark.scheduler.SparkListener;
import org.apache.spark.scheduler.SparkListenerJobStart;
import org.apache.spark.scheduler.SparkListenerStageCompleted;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Encoders;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;

/**
 * Not a test: the local-mode throughput run behind benchmarks/RESULTS.md's Spark figures
 * (benchmarks/spark-local.sh). Scores one graph, alternating single-machine Heed (one kernel
 * thread, graph build included) and the Spark classifier in local[cores] (input checks and graph
 * conventions included), and prints per round the wall and CPU seconds of both and Spark's shuffle
 * bytes written per job description (per layer). The demo network runs the bundled demo model (6
 * features); an R-MAT graph (Graph500 initiator, built symmetrised with self-loops) runs a seeded
 * random two-layer GAT, 8 heads × 8 (concatenated, ELU), then 8 heads × 8 averaged to 8 classes,
 * over 64 Gaussian features.
 *
 * <p>Arguments: {@code demo | rmat:SCALE:EDGE_FACTOR}, rounds, cores, output file.
 *
 * <p>The frames are made in Spark from arrays held in static fields: in local mode the tasks run in
 * this JVM, and a frame made from a driver-side list of rows would be serialised into the tasks.
 */
public final class LocalModeThroughput {

  private LocalModeThroughput() {}

  /** Shuffle bytes written and tasks' CPU milliseconds per job description. */
  static final class ShuffleBytes extends SparkListener {
    final Map<Integer, String> stageJob = new ConcurrentHashMap<>();
    final Map<String, Long> bytes = new ConcurrentHashMap<>();
    final Map<String, Long> cpuMillis = new ConcurrentHashMap<>();

    @Override
    public void onJobStart(SparkListenerJobStart job) {
      String d = job.properties().getProperty("spark.job.description", "other");
      job.stageIds().foreach(id -> stageJob.put((Integer) id, d));
    }

    @Override
    public void onStageCompleted(SparkListenerStageCompleted s) {
      String d = stageJob.getOrDefault(s.stageInfo().stageId(), "other");
      long w = s.stageInfo().taskMetrics().shuffleWriteMetrics().bytesWritten();
      bytes.merge(d, w, Long::sum);
      cpuMillis.merge(d, s.stageInfo().taskMetrics().executorCpuTime() / 1_000_000, Long::sum);
    }
  }

  /** The graph and features, read by local-mode tasks (same JVM). */
  private static int[] sources;

  private static int[] targets;
  private static float[] featureRows;
  private static int featureWidth;

  /** Edges (source, target) as longs, rows {@code range} of the static arrays. */
  private static Iterator<Row> edgeRows(Iterator<Long> range) {
    return rows(range, k -> RowFactory.create((long) sources[k], (long) targets[k]));
  }

  /** Features (id, f...) for the node ids of {@code range}. */
  private static Iterator<Row> featureRows(Iterator<Long> range) {
    return rows(
        range,
        i -> {
          Object[] row = new Object[featureWidth + 1];
          row[0] = (long) i;
          for (int c = 0; c < featureWidth; c++) {
            row[c + 1] = featureRows[i * featureWidth + c];
          }
          return RowFactory.create(row);
        });
  }

  private static Iterator<Row> rows(Iterator<Long> range, IntFunction<Row> row) {
    return new Iterator<>() {
      @Override
      public boolean hasNext() {
        return range.hasNext();
      }

      @Override
      public Row next() {
        return row.apply(range.next().intValue());
      }
    };
  }

  /**
   * CPU seconds so far of this process's threads by kind (Linux: /proc/self/task/T/stat's user and
   * system ticks, the thread's name with digits and '#' dropped): tasks, driver, JIT, GC.
   */
  static Map<String, Double> threadCpu() throws java.io.IOException {
    Map<String, Double> out = new java.util.TreeMap<>();
    try (var tasks = Files.list(Path.of("/proc/self/task"))) {
      for (Path t : (Iterable<Path>) tasks::iterator) {
        String stat;
        try {
          stat = Files.readString(t.resolve("stat"));
        } catch (java.io.IOException gone) {
          continue; // the thread ended
        }
        int open = stat.indexOf('(');
        int close = stat.lastIndexOf(')');
        String name = stat.substring(open + 1, close).replaceAll("[0-9#]", "").trim();
        String[] f = stat.substring(close + 2).split(" ");
        double ticks = Long.parseLong(f[11]) + Long.parseLong(f[12]); // utime, stime
        out.merge(name, ticks / 100.0, Double::sum); // USER_HZ, 100 on Linux
      }
    }
    return out;
  }

  /** {@code after - before} per kind, kinds of at least 0.1 s, largest first. */
  static String cpuDiff(Map<String, Double> before, Map<String, Double> after) {
    List<Map.Entry<String, Double>> d = new ArrayList<>();
    for (Map.Entry<String, Double> e : after.entrySet()) {
      double v = e.getValue() - before.getOrDefault(e.getKey(), 0.0);
      if (v >= 0.1) {
        d.add(Map.entry(e.getKey(), v));
      }
    }
    d.sort((a, b) -> Double.compare(b.getValue(), a.getValue()));
    StringBuilder sb = new StringBuilder("{");
    for (Map.Entry<String, Double> e : d) {
      sb.append(sb.length() > 1 ? ", " : "")
          .append(e.getKey())
          .append('=')
          .append(String.format(java.util.Locale.ROOT, "%.1f", e.getValue()));
    }
    return sb.append('}').toString();
  }

  /** Two GAT layers of 8 heads × 8 over {@code features} inputs, 8 classes; seeded. */
  static AttentionModel gat64(int features) {
    SplittableRandom r = new SplittableRandom(64);
    GraphAttentionLayer hidden =
        GraphAttentionLayer.gat("hidden", features, 8, 8)
            .weight(gaussian(r, features * 64, 1 / Math.sqrt(features)))
            .targetAttention(gaussian(r, 64, 0.3))
            .sourceAttention(gaussian(r, 64, 0.3))
            .bias(gaussian(r, 64, 0.1))
            .activation(Activation.ELU)
            .build();
    GraphAttentionLayer output =
        GraphAttentionLayer.gat("output", 64, 8, 8)
            .weight(gaussian(r, 64 * 64, 1 / 8.0))
            .targetAttention(gaussian(r, 64, 0.3))
            .sourceAttention(gaussian(r, 64, 0.3))
            .concatenateHeads(false)
            .build();
    List<String> names = new ArrayList<>();
    for (int c = 0; c < features; c++) {
      names.add("f" + c);
    }
    List<String> labels = new ArrayList<>();
    for (int c = 0; c < 8; c++) {
      labels.add("c" + c);
    }
    return AttentionModel.of(
            List.of(hidden, output, SoftmaxLayer.of("probabilities", 8)), labels, names)
        .withGraphPolicies(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS);
  }

  private static float[] gaussian(SplittableRandom r, int n, double scale) {
    float[] a = new float[n];
    for (int i = 0; i < n; i++) {
      a[i] = (float) (r.nextGaussian() * scale);
    }
    return a;
  }

  public static void main(String[] args) throws Exception {
    String graphName = args[0];
    int rounds = Integer.parseInt(args[1]);
    int cores = Integer.parseInt(args[2]);
    PrintStream out = new PrintStream(Files.newOutputStream(Path.of(args[3])), true, "UTF-8");
    AttentionModel model;
    if (graphName.equals("demo")) {
      try (InputStream in =
          LocalModeThroughput.class.getResourceAsStream("/dev/heed/demo/payments-demo.heed")) {
        model = ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
      }
    } else {
      model = gat64(64);
    }
    model = model.withKernelOptions(KernelOptions.defaults().withThreads(1));
    int n;
    int[] src;
    int[] dst;
    float[] x;
    int f = model.inputFeatureCount();
    if (graphName.equals("demo")) {
      PaymentsNetwork net = PaymentsNetworkGenerator.bundledDemo().generate();
      n = net.accountCount();
      src = net.transferSources();
      dst = net.transferTargets();
      x = net.features();
    } else {
      String[] p = graphName.split(":");
      RmatGenerator gen =
          RmatGenerator.withScale(Integer.parseInt(p[1])).edgeFactor(Integer.parseInt(p[2]));
      n = gen.nodeCount();
      src = new int[gen.edgeCount()];
      dst = new int[gen.edgeCount()];
      gen.generateInto(src, dst);
      x = gaussian(new SplittableRandom(42), n * f, 1);
    }
    sources = src;
    targets = dst;
    featureRows = x;
    featureWidth = f;
    GraphPolicies p = model.graphPolicies().orElseThrow();
    SparkSession spark =
        SparkSession.builder()
            .master("local[" + cores + "]")
            .appName("heed-local-throughput")
            .config("spark.sql.shuffle.partitions", String.valueOf(4 * cores))
            .config("spark.ui.enabled", "false")
            .config("spark.driver.host", "127.0.0.1")
            .config("spark.driver.bindAddress", "127.0.0.1")
            .getOrCreate();
    spark.sparkContext().setLogLevel("WARN");
    ShuffleBytes shuffle = new ShuffleBytes();
    spark.sparkContext().addSparkListener(shuffle);
    StructType es =
        new StructType().add("source", DataTypes.LongType).add("target", DataTypes.LongType);
    Dataset<Row> edges =
        spark
            .range(0, src.length, 1, 4 * cores)
            .mapPartitions(
                (MapPartitionsFunction<Long, Row>) LocalModeThroughput::edgeRows, Encoders.row(es))
            .cache();
    StructType fs = new StructType().add("id", DataTypes.LongType);
    for (String name : model.featureNames()) {
      fs = fs.add(name, DataTypes.FloatType);
    }
    Dataset<Row> features =
        spark
            .range(0, n, 1, 4 * cores)
            .mapPartitions(
                (MapPartitionsFunction<Long, Row>) LocalModeThroughput::featureRows,
                Encoders.row(fs))
            .cache();
    System.out.printf("edges cached: %d%n", edges.count() + features.count());
    SparkNodeClassifier classifier = SparkNodeClassifier.builder(model).build();
    out.printf(
        "# graph %s: %d nodes, %d edges; cores %d; JDK %s; load %s%n",
        graphName,
        n,
        src.length,
        cores,
        System.getProperty("java.version"),
        Files.readString(Path.of("/proc/loadavg")).trim());
    // The machine is shared: CPU seconds of this process (every thread: kernel, Spark's tasks,
    // shuffle, GC and JIT) measure the work whatever the load; wall seconds are printed too.
    com.sun.management.OperatingSystemMXBean os =
        (com.sun.management.OperatingSystemMXBean)
            java.lang.management.ManagementFactory.getOperatingSystemMXBean();
    out.println(
        "round,single_wall_s,single_cpu_s,spark_wall_s,spark_cpu_s,entries,shuffle_bytes_by_job,"
            + "task_cpu_ms_by_job,spark_cpu_s_by_thread");
    for (int round = 0; round < rounds; round++) {
      long c0 = os.getProcessCpuTime();
      long t0 = System.nanoTime();
      CsrGraph graph = CsrGraphBuilder.fromEdges(src, dst, n).policies(p).build();
      float[] probs = model.forward(graph, x, PathChoice.SPARSE, false).values();
      double single = (System.nanoTime() - t0) / 1e9;
      double singleCpu = (os.getProcessCpuTime() - c0) / 1e9;
      long c1 = os.getProcessCpuTime();
      shuffle.bytes.clear();
      shuffle.cpuMillis.clear();
      Map<String, Double> threads0 = threadCpu();
      long t1 = System.nanoTime();
      long entries;
      try (SparkScores scores = classifier.classify(spark, edges, features)) {
        scores.predictions().write().format("noop").mode("overwrite").save();
        entries = scores.entries();
      }
      double distributed = (System.nanoTime() - t1) / 1e9;
      double distributedCpu = (os.getProcessCpuTime() - c1) / 1e9;
      String threads = cpuDiff(threads0, threadCpu());
      spark.sparkContext().listenerBus().waitUntilEmpty(); // every stage's metrics are in
      out.printf(
          "%d,%.3f,%.3f,%.3f,%.3f,%d,\"%s\",\"%s\",\"%s\"%n",
          round,
          single,
          singleCpu,
          distributed,
          distributedCpu,
          entries,
          new java.util.TreeMap<>(shuffle.bytes),
          new java.util.TreeMap<>(shuffle.cpuMillis),
          threads);
      System.out.printf(
          "round %d: single %.2f s, spark %.2f s (%d probs)%n",
          round, single, distributed, probs.length);
    }
    spark.stop();
    out.close();
  }
}
