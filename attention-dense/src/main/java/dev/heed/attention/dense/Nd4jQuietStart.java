package dev.heed.attention.dense;

/**
 * Keeps ND4J's start-up report (a dozen INFO lines and native build details on standard output) out
 * of the logs of services that embed Heed: before this module first touches ND4J, it sets {@value
 * #PROPERTY} to {@code false} unless the application has set it. Start the JVM with {@code
 * -Dorg.nd4j.log.initialization=true} to see the report.
 *
 * <p>Thread safety: idempotent; a race between two first uses sets the same value.
 */
final class Nd4jQuietStart {

  /** ND4J's switch for its start-up report. */
  static final String PROPERTY = "org.nd4j.log.initialization";

  private Nd4jQuietStart() {}

  /** Sets {@value #PROPERTY} to false unless it is set already. */
  static void ensure() {
    if (System.getProperty(PROPERTY) == null) {
      System.setProperty(PROPERTY, "false");
    }
  }
}
