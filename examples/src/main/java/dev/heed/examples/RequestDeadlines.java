package dev.heed.examples;

import com.sun.net.httpserver.HttpExchange;
import java.io.IOException;
import java.io.OutputStream;
import java.nio.charset.StandardCharsets;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.Executor;
import java.util.concurrent.Executors;
import java.util.concurrent.ScheduledExecutorService;
import java.util.concurrent.TimeUnit;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * A deadline for receiving each request, so that a client that sends its request slowly (or stops
 * half-way) cannot hold a connection thread for longer than the deadline.
 *
 * <p>The JDK's HTTP server hands a connection to its executor as soon as the first bytes of a
 * request arrive, and that thread then reads the request line, the headers and (in the handler) the
 * body with blocking reads. {@link #wrap} runs each such task under a {@link Request} entry; a
 * watchdog thread checks the entries a few times per deadline. When a request has not been received
 * whole in time:
 *
 * <ul>
 *   <li>if the handler has not started (the headers are incomplete), its thread is interrupted; a
 *       blocking read on a socket channel then closes the channel (the contract of {@link
 *       java.nio.channels.InterruptibleChannel}), so the connection is closed without an answer,
 *       there being no request to answer;
 *   <li>if the handler is reading the body, the watchdog answers {@code 408 Request Timeout} with
 *       {@code Connection: close} (RFC 9110 §15.5.9) and then interrupts the thread, which closes
 *       the connection;
 *   <li>if the handler has answered early (for example 413) and the server is still draining the
 *       unread body, the thread is interrupted.
 * </ul>
 *
 * A request received whole is no longer under the deadline: computing and writing its answer are
 * bounded by the service's other limits.
 *
 * <p>Thread safety: {@link #wrap}'s tasks run on any threads; each entry's state changes under the
 * entry's lock, so the watchdog and the handler never both answer, and no interrupt reaches a
 * thread after its task has finished.
 */
final class RequestDeadlines implements AutoCloseable {

  private static final Logger LOG = LoggerFactory.getLogger(RequestDeadlines.class);
  private static final byte[] TIMED_OUT =
      "{\"error\":\"the request was not received in time; send it again, faster\"}"
          .getBytes(StandardCharsets.UTF_8);

  private enum State {
    /** The request is being received and nobody has answered it. */
    READING,
    /** The handler has claimed the answer before the body was read to its end. */
    ANSWERING,
    /** The request was received whole, or its task finished: the deadline no longer applies. */
    DONE,
    /** The deadline passed; the watchdog has answered or closed the connection. */
    EXPIRED
  }

  /** One request being received on one thread. */
  static final class Request {
    private final Thread thread;
    private final long deadlineNanos;
    private HttpExchange exchange; // guarded by this
    private State state = State.READING; // guarded by this

    private Request(Thread thread, long deadlineNanos) {
      this.thread = thread;
      this.deadlineNanos = deadlineNanos;
    }

    /** Lets the watchdog answer 408 on this exchange if the body is late. */
    synchronized void attach(HttpExchange exchange) {
      this.exchange = exchange;
    }

    /**
     * Records that the request was received whole.
     *
     * @return false if the deadline had passed first (the connection is being closed)
     */
    synchronized boolean received() {
      if (state == State.EXPIRED) {
        return false;
      }
      state = State.DONE;
      return true;
    }

    /**
     * Claims the right to answer, whether or not the body was read to its end.
     *
     * @return false if the deadline had passed first (the watchdog answered)
     */
    synchronized boolean claimAnswer() {
      if (state == State.EXPIRED) {
        return false;
      }
      if (state == State.READING) {
        state = State.ANSWERING;
      }
      return true;
    }

    /** Whether the deadline passed before the request was received. */
    synchronized boolean expired() {
      return state == State.EXPIRED;
    }

    private synchronized void expireIfLate(long now) {
      if (now - deadlineNanos < 0 || (state != State.READING && state != State.ANSWERING)) {
        return;
      }
      boolean answer = state == State.READING && exchange != null;
      state = State.EXPIRED;
      if (answer) {
        try {
          exchange.getResponseHeaders().set("Content-Type", "application/json; charset=utf-8");
          exchange.getResponseHeaders().set("Connection", "close");
          exchange.sendResponseHeaders(408, TIMED_OUT.length);
          OutputStream out = exchange.getResponseBody();
          out.write(TIMED_OUT);
          out.flush();
        } catch (IOException e) {
          LOG.debug("could not answer 408 to {}", exchange.getRemoteAddress(), e);
        }
      }
      LOG.debug("request not received within its deadline; closing the connection");
      thread.interrupt();
    }

    private synchronized void finish() {
      state = state == State.EXPIRED ? State.EXPIRED : State.DONE;
    }
  }

  private final long timeoutNanos;
  private final Set<Request> open = ConcurrentHashMap.newKeySet();
  private final ThreadLocal<Request> current = new ThreadLocal<>();
  private final ScheduledExecutorService watchdog;

  /**
   * Starts the watchdog.
   *
   * @param timeoutMillis the time a request may take to arrive, from its first byte, at least 1
   */
  RequestDeadlines(long timeoutMillis) {
    if (timeoutMillis < 1) {
      throw new IllegalArgumentException(
          "the read timeout must be at least 1 ms, got " + timeoutMillis);
    }
    this.timeoutNanos = TimeUnit.MILLISECONDS.toNanos(timeoutMillis);
    this.watchdog =
        Executors.newSingleThreadScheduledExecutor(
            task -> {
              Thread t = new Thread(task, "scoring-read-deadlines");
              t.setDaemon(true);
              return t;
            });
    long period = Math.max(10, Math.min(250, timeoutMillis / 4));
    watchdog.scheduleWithFixedDelay(this::check, period, period, TimeUnit.MILLISECONDS);
  }

  /**
   * Returns an executor that runs each task (one request's reading and handling, as the HTTP server
   * hands it over) on {@code threads} under a deadline.
   */
  Executor wrap(Executor threads) {
    return task ->
        threads.execute(
            () -> {
              Request request =
                  new Request(Thread.currentThread(), System.nanoTime() + timeoutNanos);
              open.add(request);
              current.set(request);
              try {
                task.run();
              } finally {
                current.remove();
                open.remove(request);
                request.finish();
                // An interrupt sent before finish() must not reach the thread's next task.
                Thread.interrupted();
              }
            });
  }

  /**
   * Returns the entry of the request the calling thread is receiving, with the exchange attached;
   * an entry without a deadline when the thread runs no wrapped task.
   */
  Request current(HttpExchange exchange) {
    Request request = current.get();
    if (request == null) {
      request = new Request(Thread.currentThread(), Long.MAX_VALUE);
    }
    request.attach(exchange);
    return request;
  }

  private void check() {
    long now = System.nanoTime();
    for (Request request : open) {
      request.expireIfLate(now);
    }
  }

  /** Stops the watchdog. */
  @Override
  public void close() {
    watchdog.shutdownNow();
  }
}
