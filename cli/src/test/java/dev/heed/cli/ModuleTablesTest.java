package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeSet;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/**
 * The module tables in README.md and DEVELOPERS.md match the build: one row per module of the
 * parent POM, and DEVELOPERS.md's "depends on" column names every Heed module that the module's POM
 * depends on outside test scope. Runs from the cli module, the last of the reactor.
 */
class ModuleTablesTest {

  private static final Path ROOT = Path.of("..").toAbsolutePath().normalize();

  @Test
  void readmeAndDevelopersListEveryModuleOnce() throws IOException {
    List<String> modules = modules();
    assertEquals(
        new TreeSet<>(modules), new TreeSet<>(tableRows("README.md").keySet()), "README.md");
    assertEquals(
        new TreeSet<>(modules),
        new TreeSet<>(tableRows("DEVELOPERS.md").keySet()),
        "DEVELOPERS.md");
    assertEquals(modules.size(), tableRows("README.md").size(), "README.md has a repeated row");
  }

  @Test
  void developersNamesEveryHeedDependency() throws IOException {
    Map<String, String> rows = tableRows("DEVELOPERS.md");
    for (String module : modules()) {
      String pom = Files.readString(ROOT.resolve(module).resolve("pom.xml"));
      pom =
          pom.replaceAll("(?s)<parent>.*?</parent>", "")
              .replaceAll("(?s)<build>.*</build>", "")
              .replaceAll("(?s)<dependencyManagement>.*</dependencyManagement>", "");
      Matcher dependency = Pattern.compile("(?s)<dependency>(.*?)</dependency>").matcher(pom);
      while (dependency.find()) {
        String body = dependency.group(1);
        if (!body.contains("<groupId>dev.heed</groupId>") || body.contains("<scope>test</scope>")) {
          continue;
        }
        Matcher artifact = Pattern.compile("<artifactId>(.*?)</artifactId>").matcher(body);
        assertTrue(artifact.find(), body);
        String needed = artifact.group(1);
        String cell = rows.get(module);
        assertTrue(
            cell.contains(needed),
            "DEVELOPERS.md: the row of " + module + " must name its dependency " + needed);
      }
    }
  }

  private static List<String> modules() throws IOException {
    String pom = Files.readString(ROOT.resolve("pom.xml"));
    Matcher m = Pattern.compile("<module>(.*?)</module>").matcher(pom);
    List<String> modules = new ArrayList<>();
    while (m.find()) {
      modules.add(m.group(1));
    }
    assertTrue(modules.size() > 5, "modules found in the parent POM: " + modules);
    return modules;
  }

  /** The first table whose header starts with "| module |": module name to the rest of its row. */
  private static Map<String, String> tableRows(String file) throws IOException {
    Map<String, String> rows = new LinkedHashMap<>();
    boolean inTable = false;
    for (String line : Files.readAllLines(ROOT.resolve(file))) {
      if (line.startsWith("| module |")) {
        inTable = true;
      } else if (inTable && line.startsWith("| `")) {
        int end = line.indexOf('`', 3);
        String name = line.substring(3, end);
        String previous = rows.put(name, line.substring(end + 1));
        assertTrue(previous == null, file + ": two rows for " + name);
      } else if (inTable && !line.startsWith("|")) {
        break;
      }
    }
    return rows;
  }
}
