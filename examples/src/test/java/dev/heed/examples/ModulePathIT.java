package dev.heed.examples;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.File;
import java.io.IOException;
import java.io.PrintStream;
import java.lang.module.FindException;
import java.lang.module.ModuleFinder;
import java.lang.module.ModuleReference;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.concurrent.TimeUnit;
import java.util.stream.Collectors;
import java.util.stream.Stream;
import javax.tools.JavaCompiler;
import javax.tools.ToolProvider;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Heed's packaged jars as a modular application sees them. The application is {@code
 * ModularClassification} ({@code src/test/modular-check}), a named module that requires {@code
 * dev.heed.core} only. Checked: it compiles against the exported packages, and a module that
 * imports an internal package does not; it classifies on the sparse path on the module path with
 * and without the Vector API (the kernel found through service binding), and on the dense path with
 * {@code dev.heed.dense} as an automatic module and ND4J on the class path; on the class path the
 * same program gives the same answers. Runs after packaging (failsafe), on the jars of the test
 * class path, with this JVM's {@code java}.
 */
class ModulePathIT {

  /**
   * Heed's modules and what the core and the logging binding need. Everything else, ND4J included,
   * stays on the class path: ND4J 1.0.0-M2.1 cannot be resolved as modules (see
   * attention-dense/pom.xml).
   */
  private static final Set<String> MODULE_PATH_MODULES =
      Set.of(
          "dev.heed.core",
          "dev.heed.sparse",
          "dev.heed.dense",
          "org.jgrapht.core",
          "org.jheaps",
          "org.apfloat",
          "com.fasterxml.jackson.databind",
          "com.fasterxml.jackson.core",
          "com.fasterxml.jackson.annotation",
          "org.slf4j",
          "org.slf4j.simple");

  private static final String MAIN = "dev.heed.check/dev.heed.check.ModularClassification";
  private static final String VECTOR = "jdk.incubator.vector";

  /** Scalar and vector loops, and the two paths, differ by float32 summation order only. */
  private static final float TOLERANCE = 1e-5f;

  @TempDir static Path work;

  private static final List<String> modulePath = new ArrayList<>();
  private static final List<String> classPath = new ArrayList<>();
  private static Path program;
  private static Map<Integer, Prediction> reference;

  private record Prediction(String label, float probability) {}

  private record Run(int exitCode, String output) {
    String fact(String name) {
      return output
          .lines()
          .filter(line -> line.startsWith(name + " "))
          .map(line -> line.substring(name.length() + 1))
          .findFirst()
          .orElseThrow(() -> new AssertionError("no '" + name + "' line in:\n" + output));
    }

    Map<Integer, Prediction> predictions() {
      Map<Integer, Prediction> byNode = new LinkedHashMap<>();
      output
          .lines()
          .filter(line -> line.startsWith("node "))
          .map(line -> line.split(" "))
          .forEach(
              f ->
                  byNode.put(Integer.parseInt(f[1]), new Prediction(f[2], Float.parseFloat(f[3]))));
      return byNode;
    }
  }

  @BeforeAll
  static void compileTheApplication() throws IOException {
    for (String entry : System.getProperty("java.class.path").split(File.pathSeparator)) {
      (MODULE_PATH_MODULES.contains(moduleName(Path.of(entry))) ? modulePath : classPath)
          .add(entry);
    }
    assertTrue(
        modulePath.stream()
            .map(e -> moduleName(Path.of(e)))
            .collect(Collectors.toSet())
            .containsAll(MODULE_PATH_MODULES),
        "the test class path lacks some of " + MODULE_PATH_MODULES + ": " + modulePath);
    program = work.resolve("dev.heed.check");
    Compilation compiled = compile(source(), program, "-Xlint:all", "-Werror");
    assertEquals(0, compiled.exitCode(), compiled.diagnostics());
  }

  @Test
  void aModuleCannotCompileAgainstInternalPackages() throws IOException {
    Path sources = work.resolve("peek-src");
    Files.createDirectories(sources.resolve("peek"));
    Files.writeString(
        sources.resolve("module-info.java"),
        "module peek { requires dev.heed.core; requires dev.heed.sparse; }");
    Files.writeString(
        sources.resolve("peek/Peek.java"),
        """
        package peek;
        public final class Peek {
          static final Class<?> CORE = dev.heed.attention.internal.FastExp.class;
          static final Class<?> SPARSE = dev.heed.sparse.internal.RowMath.class;
          private Peek() {}
        }
        """);
    Compilation compiled = compile(sources, work.resolve("peek"));
    assertEquals(1, compiled.exitCode(), compiled.diagnostics());
    assertTrue(
        compiled
            .diagnostics()
            .contains(
                "package dev.heed.attention.internal is declared in module dev.heed.core, which"
                    + " does not export it to module peek"),
        compiled.diagnostics());
    assertTrue(
        compiled
            .diagnostics()
            .contains(
                "package dev.heed.sparse.internal is declared in module dev.heed.sparse, which does"
                    + " not export it"),
        compiled.diagnostics());
  }

  @Test
  void sparseOnTheModulePathWithTheVectorApi() throws Exception {
    Run run = onModulePath(List.of("--add-modules", VECTOR), "SPARSE");
    assertEquals("dev.heed.check", run.fact("program-module"), run.output());
    assertEquals("dev.heed.core", run.fact("core-module"), run.output());
    assertEquals("true", run.fact("sparse-module"), "resolved by service binding: " + run.output());
    assertTrue(run.fact("kernel").startsWith("csr-vector"), run.output());
    assertAnswersMatch(run);
  }

  @Test
  void sparseOnTheModulePathWithoutTheVectorApi() throws Exception {
    Run run = onModulePath(List.of(), "SPARSE");
    assertEquals("dev.heed.check", run.fact("program-module"), run.output());
    assertTrue(run.fact("kernel").startsWith("csr-scalar"), run.output());
    assertTrue(run.output().contains("--add-modules jdk.incubator.vector"), run.output());
    assertAnswersMatch(run);
  }

  @Test
  void denseOnTheModulePathWithNd4jOnTheClassPath() throws Exception {
    // When the main class is in a module, the JVM resolves only what the modules require, and
    // ND4J's javacpp, on the class path, needs sun.misc.Unsafe from jdk.unsupported (without it:
    // NullPointerException, "LongRawIndexer.RAW" is null).
    Run run = onModulePath(List.of("--add-modules", VECTOR + ",jdk.unsupported"), "DENSE");
    assertEquals("true", run.fact("dense-module"), run.output());
    assertTrue(run.fact("kernel").startsWith("dense-nd4j"), run.output());
    assertAnswersMatch(run);
  }

  @Test
  void sparseOnTheClassPath() throws Exception {
    String path =
        Stream.of(List.of(program.toString()), modulePath, classPath)
            .flatMap(List::stream)
            .collect(Collectors.joining(File.pathSeparator));
    Run run =
        java(
            "--add-modules", VECTOR, "-cp", path, "dev.heed.check.ModularClassification", "SPARSE");
    assertEquals("null", run.fact("program-module"), run.output());
    assertEquals("null", run.fact("core-module"), run.output());
    assertTrue(run.fact("kernel").startsWith("csr-vector"), run.output());
    assertAnswersMatch(run);
  }

  /** Compares with the first run's answers (the sparse path, vector loops, module path). */
  private static synchronized void assertAnswersMatch(Run run) throws Exception {
    if (reference == null) {
      reference = onModulePath(List.of("--add-modules", VECTOR), "SPARSE").predictions();
      assertEquals(40, reference.size(), "predictions of the reference run");
    }
    Map<Integer, Prediction> answers = run.predictions();
    assertEquals(reference.keySet(), answers.keySet(), run.output());
    for (Map.Entry<Integer, Prediction> e : reference.entrySet()) {
      Prediction expected = e.getValue();
      Prediction actual = answers.get(e.getKey());
      assertEquals(expected.label(), actual.label(), "node " + e.getKey());
      assertEquals(
          expected.probability(),
          actual.probability(),
          TOLERANCE * expected.probability(),
          "node " + e.getKey());
    }
  }

  private static Run onModulePath(List<String> options, String path) throws Exception {
    List<String> command = new ArrayList<>(options);
    command.add("-p");
    command.add(program + File.pathSeparator + String.join(File.pathSeparator, modulePath));
    command.add("-cp");
    command.add(String.join(File.pathSeparator, classPath));
    command.add("-m");
    command.add(MAIN);
    command.add(path);
    return java(command.toArray(String[]::new));
  }

  private static Run java(String... args) throws IOException, InterruptedException {
    List<String> command = new ArrayList<>();
    command.add(Path.of(System.getProperty("java.home"), "bin", "java").toString());
    command.add("-Xmx512m");
    command.add("-Dorg.bytedeco.javacpp.maxphysicalbytes=2g");
    command.add("-Dorg.bytedeco.javacpp.maxbytes=1g");
    command.addAll(List.of(args));
    Path output = Files.createTempFile(work, "run", ".out");
    Process process =
        new ProcessBuilder(command)
            .redirectErrorStream(true)
            .redirectOutput(output.toFile())
            .redirectInput(ProcessBuilder.Redirect.from(new File("/dev/null")))
            .start();
    if (!process.waitFor(3, TimeUnit.MINUTES)) {
      process.destroyForcibly();
      throw new AssertionError("did not finish in 3 min: " + command);
    }
    Run run = new Run(process.exitValue(), Files.readString(output, StandardCharsets.UTF_8));
    assertEquals(0, run.exitCode(), command + "\n" + run.output());
    return run;
  }

  private record Compilation(int exitCode, String diagnostics) {}

  /** Compiles every Java file under {@code sources} as one module, against the module path. */
  private static Compilation compile(Path sources, Path classes, String... options)
      throws IOException {
    JavaCompiler javac = ToolProvider.getSystemJavaCompiler();
    List<String> args = new ArrayList<>(List.of(options));
    // An empty class path: in-process javac would otherwise default to this JVM's.
    args.addAll(List.of("-cp", Files.createDirectories(work.resolve("empty")).toString()));
    args.addAll(
        List.of(
            "--release",
            "17",
            "-d",
            classes.toString(),
            "-p",
            String.join(File.pathSeparator, modulePath)));
    try (Stream<Path> files = Files.walk(sources)) {
      files.filter(f -> f.toString().endsWith(".java")).forEach(f -> args.add(f.toString()));
    }
    ByteArrayOutputStream diagnostics = new ByteArrayOutputStream();
    PrintStream err = new PrintStream(diagnostics, true, StandardCharsets.UTF_8);
    int exitCode = javac.run(null, err, err, args.toArray(String[]::new));
    return new Compilation(exitCode, diagnostics.toString(StandardCharsets.UTF_8));
  }

  private static Path source() {
    return Path.of(System.getProperty("basedir", System.getProperty("user.dir")))
        .resolve("src/test/modular-check");
  }

  /** The module name of a jar or an exploded module directory, or "" for anything else. */
  private static String moduleName(Path entry) {
    boolean candidate =
        entry.toString().endsWith(".jar")
            ? Files.isRegularFile(entry)
            : Files.isRegularFile(entry.resolve("module-info.class"));
    if (!candidate) {
      return "";
    }
    try {
      return ModuleFinder.of(entry).findAll().stream()
          .map(ModuleReference::descriptor)
          .map(d -> d.name())
          .findFirst()
          .orElse("");
    } catch (FindException e) {
      return ""; // for example nd4j-api's broken descriptor: class path
    }
  }
}
