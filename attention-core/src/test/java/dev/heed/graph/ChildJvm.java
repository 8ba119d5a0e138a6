package dev.heed.graph;

import java.io.File;
import java.net.URISyntaxException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;

/** Starts a test class's {@code main} in a child JVM that sees the same classes as this one. */
final class ChildJvm {

  private ChildJvm() {}

  /** Returns the command that runs {@code main} of {@code mainClass} with the JVM options given. */
  static List<String> command(Class<?> mainClass, List<String> jvmOptions, String... args) {
    List<String> command = new ArrayList<>();
    command.add(Path.of(System.getProperty("java.home"), "bin", "java").toString());
    command.addAll(jvmOptions);
    command.add("-cp");
    command.add(classPath(mainClass));
    command.add(mainClass.getName());
    command.addAll(List.of(args));
    return command;
  }

  /** This module's classes, its tests, and what the test JVM reads (module path or class path). */
  private static String classPath(Class<?> mainClass) {
    List<String> parts = new ArrayList<>();
    parts.add(location(mainClass));
    parts.add(location(CsrGraph.class));
    for (String property : new String[] {"jdk.module.path", "java.class.path"}) {
      String value = System.getProperty(property);
      if (value != null && !value.isEmpty()) {
        parts.add(value);
      }
    }
    return String.join(File.pathSeparator, parts);
  }

  private static String location(Class<?> c) {
    try {
      return Path.of(c.getProtectionDomain().getCodeSource().getLocation().toURI()).toString();
    } catch (URISyntaxException e) {
      throw new IllegalStateException(e);
    }
  }
}
