package dev.heed.examples;

import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.model.AttentionModel;
import java.io.IOException;
import java.io.PrintStream;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;

/**
 * The throughput and latency run behind the scoring service's figures in {@code
 * benchmarks/RESULTS.md} (test sources, not a test; {@code benchmarks/service-load.sh} runs it):
 * the bundled demo model over the demo payments network, served by {@link ScoringService} with its
 * default limits, driven by closed-loop clients (each sends its next request when the last is
 * answered) for a fixed time per client count.
 *
 * <p>Each client's requests: 90 % score queries from the table ({@code explain=0}), 5 % on request
 * ({@code fresh=true}), 5 % updates (one transfer between two existing accounts). Client and
 * service share the machine, so the figures are the pair's, not the service's alone.
 *
 * <p>Arguments: client counts (comma-separated, default {@code 8,32,64}), seconds per count
 * (default 10), rounds (default 2), warm-up seconds (default 5), service threads (default the
 * available processors), output CSV (default {@code benchmarks/target/service-load.csv}).
 */
final class ScoringServiceLoadRun {

  private static final long SEED = 20261204L;

  private ScoringServiceLoadRun() {}

  /** What one client saw: latencies in nanoseconds per request kind, and statuses. */
  private static final class Tally {
    final long[][] latencies = new long[3][1024];
    final int[] counts = new int[3];
    int refused; // 503
    int failed; // anything else not 200

    void add(int kind, long nanos) {
      if (counts[kind] == latencies[kind].length) {
        latencies[kind] = Arrays.copyOf(latencies[kind], counts[kind] * 2);
      }
      latencies[kind][counts[kind]++] = nanos;
    }
  }

  private static final String[] KINDS = {"table", "on-request", "update"};

  public static void main(String[] args) throws Exception {
    int[] levels =
        Arrays.stream((args.length > 0 ? args[0] : "8,32,64").split(","))
            .mapToInt(Integer::parseInt)
            .toArray();
    int seconds = args.length > 1 ? Integer.parseInt(args[1]) : 10;
    int rounds = args.length > 2 ? Integer.parseInt(args[2]) : 2;
    int warmUp = args.length > 3 ? Integer.parseInt(args[3]) : 5;
    int threads =
        args.length > 4 ? Integer.parseInt(args[4]) : Runtime.getRuntime().availableProcessors();
    Path out = Path.of(args.length > 5 ? args[5] : "benchmarks/target/service-load.csv");

    PaymentsNetwork network = PaymentsNetworkGenerator.bundledDemo().generate();
    AttentionModel model = ModelSource.load(ModelSource.DEMO_MODEL);
    HttpClient client =
        HttpClient.newBuilder()
            .version(HttpClient.Version.HTTP_1_1)
            .connectTimeout(Duration.ofSeconds(30))
            .build();
    Files.createDirectories(out.toAbsolutePath().getParent());
    PrintStream console = System.out;
    try (ScoringService service =
            ScoringService.start(
                model,
                PaymentsGraphs.toIndexedGraph(network),
                PaymentsGraphs.features(network),
                0,
                threads);
        PrintStream csv =
            new PrintStream(Files.newOutputStream(out), true, StandardCharsets.UTF_8)) {
      console.printf(
          "service: %d accounts, %d threads, JDK %s, %d processors, %s%n",
          network.accountCount(),
          threads,
          Runtime.version(),
          Runtime.getRuntime().availableProcessors(),
          Instant.now());
      csv.println(
          "round,clients,seconds,requests,per_second,kind,count,p50_ms,p90_ms,p99_ms,refused_503,"
              + "failed,load_before,load_after");
      drive(service, client, network, levels[0], warmUp, 0); // warm-up, not recorded
      for (int round = 1; round <= rounds; round++) {
        for (int clients : levels) {
          String loadBefore = loadAverage();
          long started = System.nanoTime();
          List<Tally> tallies = drive(service, client, network, clients, seconds, round);
          double elapsed = (System.nanoTime() - started) / 1e9;
          String loadAfter = loadAverage();
          int refused = tallies.stream().mapToInt(t -> t.refused).sum();
          int failed = tallies.stream().mapToInt(t -> t.failed).sum();
          long requests = 0;
          for (Tally t : tallies) {
            requests += t.counts[0] + t.counts[1] + t.counts[2] + t.refused + t.failed;
          }
          for (int kind = -1; kind < KINDS.length; kind++) {
            long[] all = merged(tallies, kind);
            Arrays.sort(all);
            String line =
                String.format(
                    Locale.ROOT,
                    "%d,%d,%.1f,%d,%.0f,%s,%d,%.2f,%.2f,%.2f,%d,%d,%s,%s",
                    round,
                    clients,
                    elapsed,
                    requests,
                    requests / elapsed,
                    kind < 0 ? "all" : KINDS[kind],
                    all.length,
                    percentile(all, 0.50),
                    percentile(all, 0.90),
                    percentile(all, 0.99),
                    refused,
                    failed,
                    loadBefore,
                    loadAfter);
            csv.println(line);
            console.println(line);
          }
        }
      }
    }
    console.println("wrote " + out);
  }

  /** Runs {@code clients} closed-loop clients for {@code seconds}; returns what each saw. */
  private static List<Tally> drive(
      ScoringService service,
      HttpClient client,
      PaymentsNetwork network,
      int clients,
      int seconds,
      int round)
      throws Exception {
    long end = System.nanoTime() + seconds * 1_000_000_000L;
    ExecutorService pool = Executors.newFixedThreadPool(clients);
    try {
      List<Future<Tally>> futures = new ArrayList<>();
      for (int c = 0; c < clients; c++) {
        long seed = SEED + round * 100_003L + clients * 1_009L + c;
        futures.add(pool.submit(() -> runClient(service, client, network, seed, end)));
      }
      List<Tally> tallies = new ArrayList<>();
      for (Future<Tally> f : futures) {
        tallies.add(f.get());
      }
      return tallies;
    } finally {
      pool.shutdownNow();
    }
  }

  private static Tally runClient(
      ScoringService service, HttpClient client, PaymentsNetwork network, long seed, long end)
      throws IOException, InterruptedException {
    SplittableRandom random = new SplittableRandom(seed);
    Tally tally = new Tally();
    int n = network.accountCount();
    while (System.nanoTime() < end) {
      int pick = random.nextInt(100);
      int kind = pick < 90 ? 0 : pick < 95 ? 1 : 2;
      HttpRequest.Builder request;
      if (kind == 2) {
        String body =
            "{\"transfers\": [{\"source\": \""
                + network.accountId(random.nextInt(n))
                + "\", \"target\": \""
                + network.accountId(random.nextInt(n))
                + "\"}]}";
        request =
            HttpRequest.newBuilder(service.uri("/transfers"))
                .POST(HttpRequest.BodyPublishers.ofString(body));
      } else {
        String node = network.accountId(random.nextInt(n));
        request =
            HttpRequest.newBuilder(
                    service.uri("/score?node=" + node + (kind == 1 ? "&fresh=true" : "")))
                .GET();
      }
      long started = System.nanoTime();
      HttpResponse<String> response =
          client.send(
              request.timeout(Duration.ofSeconds(60)).build(),
              HttpResponse.BodyHandlers.ofString());
      long took = System.nanoTime() - started;
      if (response.statusCode() == 200) {
        tally.add(kind, took);
      } else if (response.statusCode() == 503) {
        tally.refused++;
      } else {
        tally.failed++;
      }
    }
    return tally;
  }

  private static long[] merged(List<Tally> tallies, int kind) {
    int size = 0;
    for (Tally t : tallies) {
      for (int k = 0; k < KINDS.length; k++) {
        size += kind < 0 || kind == k ? t.counts[k] : 0;
      }
    }
    long[] all = new long[size];
    int at = 0;
    for (Tally t : tallies) {
      for (int k = 0; k < KINDS.length; k++) {
        if (kind < 0 || kind == k) {
          System.arraycopy(t.latencies[k], 0, all, at, t.counts[k]);
          at += t.counts[k];
        }
      }
    }
    return all;
  }

  /** Nearest-rank percentile (common practice), in milliseconds; NaN when empty. */
  private static double percentile(long[] sorted, double q) {
    if (sorted.length == 0) {
      return Double.NaN;
    }
    int rank = (int) Math.ceil(q * sorted.length);
    return sorted[Math.max(rank, 1) - 1] / 1e6;
  }

  private static String loadAverage() {
    try {
      String[] parts = Files.readString(Path.of("/proc/loadavg")).trim().split(" ");
      return parts[0];
    } catch (IOException | RuntimeException e) {
      return "";
    }
  }
}
