package dev.heed.examples;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.code_intelligence.jazzer.api.BugDetectors;
import com.code_intelligence.jazzer.api.SilentCloseable;
import com.code_intelligence.jazzer.junit.FuzzTest;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.model.AttentionModel;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.net.InetSocketAddress;
import java.net.Socket;
import java.net.SocketTimeoutException;
import java.net.URI;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.Set;

/**
 * Fuzz target for the scoring service's request handling (Jazzer), over real HTTP on 127.0.0.1:
 * each input is one request, its first line {@code METHOD TARGET} (control characters turned into
 * spaces) and the rest its body, written raw to a socket so that the service, not an HTTP client,
 * meets whatever the bytes hold. Allowed outcomes: an answer with one of the documented statuses
 * (200, 400, 404, 405, 408, 413, 503), or the JDK server closing a connection whose request line it
 * cannot read; then {@code GET /health} must still answer 200. A 500, a hang past the socket
 * timeout or a dead service is a finding. Seeds and saved findings: {@code
 * ScoringServiceFuzzTestInputs/handleRequest/} in the test resources. The service stays up across
 * inputs, so updates that the fuzzer sends accumulate in its live graph, as they would in
 * production.
 */
class ScoringServiceFuzzTest {

  private static final Set<Integer> DOCUMENTED = Set.of(200, 400, 404, 405, 408, 413, 503);
  private static final int TIMEOUT_MILLIS = 20_000; // the service's read deadline is 10 s
  private static final ScoringService SERVICE = start();

  private static ScoringService start() {
    long seed = 20261204L;
    PaymentsNetwork network = PaymentsNetworkGenerator.of(1000, 6000, seed).generate();
    AttentionModel model = TestModel.build(seed);
    try {
      ScoringService service =
          ScoringService.start(
              model,
              PaymentsGraphs.toIndexedGraph(network),
              PaymentsGraphs.features(network),
              0,
              2);
      Runtime.getRuntime().addShutdownHook(new Thread(service::close));
      return service;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  @FuzzTest(maxDuration = "60s")
  void handleRequest(byte[] input) throws IOException {
    int newline = indexOf(input, (byte) '\n');
    byte[] line = Arrays.copyOf(input, newline < 0 ? input.length : newline);
    byte[] body = newline < 0 ? new byte[0] : Arrays.copyOfRange(input, newline + 1, input.length);
    for (int i = 0; i < line.length; i++) {
      if (line[i] < 0x20 || line[i] == 0x7f) {
        line[i] = ' '; // one request line; header injection is not what this target tries
      }
    }
    String requestLine = new String(line, StandardCharsets.ISO_8859_1).trim();
    int space = requestLine.indexOf(' ');
    String method = space < 0 ? requestLine : requestLine.substring(0, space);
    String target = space < 0 ? "/" : requestLine.substring(space + 1).trim().replace(' ', '+');
    if (method.isEmpty()) {
      method = "GET";
    }
    Integer status = send(method, target.isEmpty() ? "/" : target, body);
    if (status != null) {
      assertTrue(
          DOCUMENTED.contains(status),
          "status " + status + " for " + method + " " + target + " with " + body.length + " bytes");
    }
    assertEquals(200, send("GET", "/health", new byte[0]), "the service must stay up");
  }

  /**
   * Sends one request and returns the answer's status, or null when the server closed the
   * connection without an answer (the JDK server does so for a request line it cannot parse).
   */
  private static Integer send(String method, String target, byte[] body) throws IOException {
    URI base = SERVICE.uri("/");
    // the target's own connection to the service under test, not one the input chose (Jazzer's
    // server-side request forgery detector would report any connection otherwise)
    SilentCloseable allowed =
        BugDetectors.allowNetworkConnections(
            (host, port) ->
                port == base.getPort()
                    && (host.equals(base.getHost()) || host.equals("localhost")));
    try (Socket socket = new Socket()) {
      socket.connect(new InetSocketAddress(base.getHost(), base.getPort()), TIMEOUT_MILLIS);
      socket.setSoTimeout(TIMEOUT_MILLIS);
      OutputStream out = socket.getOutputStream();
      String head =
          method
              + " "
              + target
              + " HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Length: "
              + body.length
              + "\r\nConnection: close\r\n\r\n";
      try {
        out.write(head.getBytes(StandardCharsets.ISO_8859_1));
        out.write(body);
        out.flush();
      } catch (IOException closedEarly) {
        // the server may answer (413) and close before the body is all written; read the answer
      }
      String statusLine = readLine(socket.getInputStream());
      if (statusLine.isEmpty()) {
        return null;
      }
      String[] parts = statusLine.split(" ");
      assertTrue(
          parts.length >= 2 && parts[0].startsWith("HTTP/1."), "not an HTTP answer: " + statusLine);
      return Integer.parseInt(parts[1]);
    } catch (SocketTimeoutException e) {
      throw new AssertionError(
          "no answer within " + TIMEOUT_MILLIS + " ms for " + method + " " + target, e);
    } finally {
      allowed.close();
    }
  }

  private static String readLine(InputStream in) throws IOException {
    ByteArrayOutputStream line = new ByteArrayOutputStream();
    try {
      for (int b = in.read(); b >= 0 && b != '\n'; b = in.read()) {
        line.write(b);
      }
    } catch (java.net.SocketException reset) {
      // a connection reset before any answer counts as closed without one
    }
    return line.toString(StandardCharsets.ISO_8859_1).trim();
  }

  private static int indexOf(byte[] a, byte value) {
    for (int i = 0; i < a.length; i++) {
      if (a[i] == value) {
        return i;
      }
    }
    return -1;
  }
}
