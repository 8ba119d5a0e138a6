package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import java.io.File;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.nio.file.StandardOpenOption;
import java.time.Duration;
import java.util.List;
import java.util.Optional;
import java.util.logging.Level;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.openqa.selenium.By;
import org.openqa.selenium.Dimension;
import org.openqa.selenium.JavascriptExecutor;
import org.openqa.selenium.NoAlertPresentException;
import org.openqa.selenium.OutputType;
import org.openqa.selenium.WebDriver;
import org.openqa.selenium.WebElement;
import org.openqa.selenium.chrome.ChromeDriver;
import org.openqa.selenium.chrome.ChromeDriverService;
import org.openqa.selenium.chrome.ChromeOptions;
import org.openqa.selenium.interactions.Actions;
import org.openqa.selenium.logging.LogEntry;
import org.openqa.selenium.logging.LogType;
import org.openqa.selenium.logging.LoggingPreferences;
import org.openqa.selenium.support.ui.WebDriverWait;

/**
 * The HTML report of {@code heed classify --report}, written by the real jar and opened from disk
 * in headless Chromium: it renders without script errors, loads nothing from outside, shows one
 * card and one picture per node, its script works (hover pairs a row with its node, the filter
 * hides cards), and an id written as markup stays text. Takes a screenshot to {@code
 * target/report-screenshot.png} for a person to look at.
 *
 * <p>Needs Chromium and its driver (Debian: {@code apt-get install -y chromium chromium-driver});
 * {@code -Dheed.test.chromium=PATH} and {@code -Dheed.test.chromedriver=PATH} point elsewhere.
 * Without them the test fails rather than skipping, so that CI cannot pass without it.
 */
class ReportBrowserIT {

  private static final long SEED = 20261204L;

  /** An id that would run script if the page inserted it as markup. */
  private static final String MARKUP_ID = "<img src=x onerror=alert(1)>\"&'";

  @TempDir Path dir;

  @Test
  void reportRendersWithoutErrorsAndItsScriptWorks() throws Exception {
    CliFixtures.Data data = CliFixtures.randomData(40, 60, 5, SEED);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    Files.writeString(
        graph, MARKUP_ID + ",acct-000\n" + MARKUP_ID + ",acct-005\n", StandardOpenOption.APPEND);
    Path features = data.writeFeaturesCsv(dir.resolve("x.csv"), null);
    Files.writeString(features, MARKUP_ID + ",0.5,-0.25,0.125,1,-1\n", StandardOpenOption.APPEND);
    Path model = CliFixtures.mixedModel(dir);
    CliFixtures.ClassifyInputs inputs = new CliFixtures.ClassifyInputs(model, graph, features);
    String predictions = dir.resolve("p.csv").toString();
    Path top = dir.resolve("top.html");
    cli(inputs.args("--out", predictions, "--report", top.toString(), "--report-top", "6"));
    Path named = dir.resolve("named.html");
    cli(
        inputs.args(
            "--out",
            predictions,
            "--report",
            named.toString(),
            "--nodes",
            MARKUP_ID + ",acct-000"));

    WebDriver browser = startBrowser();
    try {
      JavascriptExecutor js = (JavascriptExecutor) browser;
      open(browser, top);
      assertEquals(6, browser.findElements(By.cssSelector("section.card")).size());
      assertEquals(6, browser.findElements(By.cssSelector("section.card svg.hood")).size());
      for (WebElement svg : browser.findElements(By.cssSelector("svg.hood"))) {
        assertTrue(svg.getSize().getWidth() > 200, "the picture is drawn: " + svg.getSize());
        assertTrue(
            svg.findElements(By.cssSelector("circle.node")).size() >= 1,
            "a picture shows the attended nodes");
        assertEquals(1, svg.findElements(By.cssSelector("circle.centre")).size());
      }
      assertEquals(
          0L,
          js.executeScript("return performance.getEntriesByType('resource').length"),
          "the page loads nothing");

      // Hovering a row of the weights table marks the same node in the picture.
      WebElement row = browser.findElement(By.cssSelector("#card-1 table.weights tr[data-link]"));
      String link = row.getAttribute("data-link");
      new Actions(browser).moveToElement(row).perform();
      WebElement group =
          browser.findElement(By.cssSelector("#card-1 svg g[data-link='" + link + "']"));
      assertTrue(group.getAttribute("class").contains("hot"), group.getAttribute("class"));

      // The filter keeps the card whose id matches.
      String firstId = browser.findElement(By.cssSelector("#card-1")).getAttribute("data-id");
      browser.findElement(By.id("filter")).sendKeys(firstId);
      assertEquals(
          1,
          browser.findElements(By.cssSelector("section.card")).stream()
              .filter(WebElement::isDisplayed)
              .count());
      browser.findElement(By.id("filter")).clear();
      js.executeScript("document.getElementById('filter').dispatchEvent(new Event('input'))");
      screenshot(browser);
      assertNoSevereLog(browser, top);

      open(browser, named);
      assertThrows(NoAlertPresentException.class, () -> browser.switchTo().alert());
      List<WebElement> cards = browser.findElements(By.cssSelector("section.card"));
      assertEquals(2, cards.size());
      assertEquals(MARKUP_ID, cards.get(0).findElement(By.cssSelector("h2 .nid")).getText());
      assertEquals(MARKUP_ID, cards.get(0).getAttribute("data-id"));
      assertEquals(0, browser.findElements(By.tagName("img")).size(), "no id became an element");
      assertNoSevereLog(browser, named);

      // The log check sees errors: a console error is reported at SEVERE.
      js.executeScript("console.error('heed probe')");
      assertTrue(
          browser.manage().logs().get(LogType.BROWSER).getAll().stream()
              .anyMatch(e -> e.getLevel() == Level.SEVERE && e.getMessage().contains("heed probe")),
          "the browser log did not report a console error: the SEVERE check would be blind");
    } finally {
      browser.quit();
    }
  }

  private void cli(String... args) throws Exception {
    CliProcess.Result r = CliProcess.run(dir, args);
    assertEquals(0, r.exitCode(), r.toString());
  }

  private static void open(WebDriver browser, Path page) {
    browser.get(page.toUri().toString());
    new WebDriverWait(browser, Duration.ofSeconds(20))
        .until(b -> "yes".equals(b.findElement(By.tagName("body")).getAttribute("data-ready")));
  }

  private static void assertNoSevereLog(WebDriver browser, Path page) {
    List<LogEntry> severe =
        browser.manage().logs().get(LogType.BROWSER).getAll().stream()
            .filter(e -> e.getLevel().intValue() >= Level.SEVERE.intValue())
            .toList();
    assertTrue(severe.isEmpty(), page.getFileName() + ": browser errors " + severe);
  }

  /**
   * Screenshots for a person to judge: the whole page (the window grown to its height, at most 4000
   * px) and the first card alone.
   */
  private static void screenshot(WebDriver browser) throws Exception {
    JavascriptExecutor js = (JavascriptExecutor) browser;
    long height = (Long) js.executeScript("return document.documentElement.scrollHeight");
    browser.manage().window().setSize(new Dimension(1280, (int) Math.min(height + 40, 4000)));
    js.executeScript("window.scrollTo(0, 0)");
    Path target = Path.of(System.getProperty("basedir", "."), "target");
    Files.createDirectories(target);
    save(
        ((ChromeDriver) browser).getScreenshotAs(OutputType.FILE), target, "report-screenshot.png");
    save(
        browser.findElement(By.id("card-1")).getScreenshotAs(OutputType.FILE),
        target,
        "report-card.png");
  }

  private static void save(File shot, Path folder, String name) throws Exception {
    Files.copy(shot.toPath(), folder.resolve(name), StandardCopyOption.REPLACE_EXISTING);
  }

  private WebDriver startBrowser() throws Exception {
    Path chromium = executable("heed.test.chromium", "chromium", "chromium-browser");
    Path driver = executable("heed.test.chromedriver", "chromedriver");
    ChromeOptions options = new ChromeOptions();
    options.setBinary(chromium.toFile());
    options.addArguments(
        "--headless=new",
        "--no-sandbox", // CI runs as root, where Chromium's sandbox cannot start
        "--disable-dev-shm-usage",
        "--disable-gpu",
        "--no-first-run",
        "--disable-extensions",
        "--hide-scrollbars",
        "--force-device-scale-factor=1",
        "--window-size=1280,1000",
        "--user-data-dir=" + Files.createDirectories(dir.resolve("chromium-profile")));
    LoggingPreferences logs = new LoggingPreferences();
    logs.enable(LogType.BROWSER, Level.ALL);
    options.setCapability(ChromeOptions.LOGGING_PREFS, logs);
    ChromeDriverService service =
        new ChromeDriverService.Builder().usingDriverExecutable(driver.toFile()).build();
    return new ChromeDriver(service, options);
  }

  /** The executable named by a system property, or found on the PATH; fails clearly if none. */
  private static Path executable(String property, String... names) {
    String given = System.getProperty(property);
    if (given != null && !given.isBlank()) {
      Path p = Path.of(given);
      if (!Files.isExecutable(p)) {
        fail("-D" + property + "=" + given + " is not an executable file");
      }
      return p;
    }
    String path = Optional.ofNullable(System.getenv("PATH")).orElse("/usr/bin");
    for (String name : names) {
      for (String folder : path.split(File.pathSeparator)) {
        Path p = Path.of(folder, name);
        if (Files.isExecutable(p)) {
          return p;
        }
      }
    }
    return fail(
        "the HTML report test needs Chromium and its driver, and found no "
            + String.join(" or ", names)
            + " on the PATH: install them (Debian: apt-get install -y chromium chromium-driver;"
            + " .ci/run does) or give -D"
            + property
            + "=PATH");
  }
}
