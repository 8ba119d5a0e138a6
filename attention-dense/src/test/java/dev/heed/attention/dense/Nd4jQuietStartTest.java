package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;

import org.junit.jupiter.api.Test;

/** ND4J's start-up report is off by default and stays as the application set it. */
class Nd4jQuietStartTest {

  @Test
  void setsTheSwitchOnlyWhenTheApplicationDidNot() {
    String before = System.getProperty(Nd4jQuietStart.PROPERTY);
    try {
      System.clearProperty(Nd4jQuietStart.PROPERTY);
      Nd4jQuietStart.ensure();
      assertEquals("false", System.getProperty(Nd4jQuietStart.PROPERTY));
      System.setProperty(Nd4jQuietStart.PROPERTY, "true");
      Nd4jQuietStart.ensure();
      assertEquals("true", System.getProperty(Nd4jQuietStart.PROPERTY));
    } finally {
      if (before == null) {
        System.clearProperty(Nd4jQuietStart.PROPERTY);
      } else {
        System.setProperty(Nd4jQuietStart.PROPERTY, before);
      }
    }
  }
}
