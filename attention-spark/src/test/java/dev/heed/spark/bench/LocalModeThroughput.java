package dev.heed.spark.bench;

import dev.heed.attention.KernelOptions;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import dev.heed.spark.SparkNodeClassifier;
import dev.heed.spark.SparkScores;
import java.io.InputStream;
import java.io.PrintStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.ConcurrentHashMap;
import org.apache.spark.api.java.JavaSparkContext;
import org.apache.spark.scheduler.SparkListener;
import org.apache.spark.scheduler.SparkListenerJobStart;
import org.apache.spark.scheduler.SparkListenerStageCompleted;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;

/**
 * Not a test: the local-mode throughput run behind benchmarks/RESULTS.md's Spark figures
 * (benchmarks/spark-local.sh). Scores one graph with the bundled demo model, alternating
 * single-machine Heed (one kernel thread, graph build included) and the Spark classifier in
 * local[cores] (input checks and graph conventions included), and prints per round the wall seconds
 * of both and Spark's shuffle bytes written per job description (per layer).
 *
 * <p>Arguments: {@code demo | rmat:SCALE:EDGE_FACTOR}, rounds, cores, output file.
 */
public final class LocalModeThroughput {

  private LocalModeThroughput() {}

  /** Shuffle bytes written per job description. */
  static final class ShuffleBytes extends SparkListener {
    final Map<Integer, String> stageJob = new ConcurrentHashMap<>();
    final Map<String, Long> bytes = new ConcurrentHashMap<>();

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
    }
  }

  public static void main(String[] args) throws Exception {
    String graphName = args[0];
    int rounds = Integer.parseInt(args[1]);
    int cores = Integer.parseInt(args[2]);
    PrintStream out = new PrintStream(Files.newOutputStream(Path.of(args[3])), true, "UTF-8");
    AttentionModel model;
    try (InputStream in =
        LocalModeThroughput.class.getResourceAsStream("/dev/heed/demo/payments-demo.heed")) {
      model = ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
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
      SplittableRandom r = new SplittableRandom(42);
      x = new float[n * f];
      for (int i = 0; i < x.length; i++) {
        x[i] = (float) r.nextGaussian();
      }
    }
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
    List<Row> er = new ArrayList<>(src.length);
    for (int k = 0; k < src.length; k++) {
      er.add(RowFactory.create((long) src[k], (long) dst[k]));
    }
    Dataset<Row> edges =
        spark
            .createDataFrame(
                JavaSparkContext.fromSparkContext(spark.sparkContext()).parallelize(er),
                new StructType()
                    .add("source", DataTypes.LongType)
                    .add("target", DataTypes.LongType))
            .cache();
    List<Row> fr = new ArrayList<>(n);
    StructType fs = new StructType().add("id", DataTypes.LongType);
    for (String name : model.featureNames()) {
      fs = fs.add(name, DataTypes.FloatType);
    }
    for (int i = 0; i < n; i++) {
      Object[] row = new Object[f + 1];
      row[0] = (long) i;
      for (int c = 0; c < f; c++) {
        row[c + 1] = x[i * f + c];
      }
      fr.add(RowFactory.create(row));
    }
    Dataset<Row> features =
        spark
            .createDataFrame(
                JavaSparkContext.fromSparkContext(spark.sparkContext()).parallelize(fr), fs)
            .cache();
    er = null;
    fr = null;
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
        "round,single_wall_s,single_cpu_s,spark_wall_s,spark_cpu_s,entries,shuffle_bytes_by_job");
    for (int round = 0; round < rounds; round++) {
      long c0 = os.getProcessCpuTime();
      long t0 = System.nanoTime();
      CsrGraph graph = CsrGraphBuilder.fromEdges(src, dst, n).policies(p).build();
      float[] probs = model.forward(graph, x, PathChoice.SPARSE, false).values();
      double single = (System.nanoTime() - t0) / 1e9;
      double singleCpu = (os.getProcessCpuTime() - c0) / 1e9;
      long c1 = os.getProcessCpuTime();
      shuffle.bytes.clear();
      long t1 = System.nanoTime();
      long entries;
      try (SparkScores scores = classifier.classify(spark, edges, features)) {
        scores.predictions().write().format("noop").mode("overwrite").save();
        entries = scores.entries();
      }
      double distributed = (System.nanoTime() - t1) / 1e9;
      double distributedCpu = (os.getProcessCpuTime() - c1) / 1e9;
      out.printf(
          "%d,%.3f,%.3f,%.3f,%.3f,%d,\"%s\"%n",
          round,
          single,
          singleCpu,
          distributed,
          distributedCpu,
          entries,
          new java.util.TreeMap<>(shuffle.bytes));
      System.out.printf(
          "round %d: single %.2f s, spark %.2f s (%d probs)%n",
          round, single, distributed, probs.length);
    }
    spark.stop();
    out.close();
  }
}
