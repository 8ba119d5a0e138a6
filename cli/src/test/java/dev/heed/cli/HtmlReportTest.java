package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.StringWriter;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The HTML report's text, from a hand-made report: escaping of ids and labels that look like
 * markup, nothing fetched from outside the page, the cautions, and the same bytes every time. A
 * browser renders it in {@link ReportBrowserIT}.
 */
class HtmlReportTest {

  private static final String MARKUP_ID = "<script>alert('x')</script> & \"q\"";

  private static final String LONG_ID = "\uD83D\uDE00-account-with-a-long-id";

  private static ExplanationReport report() {
    ExplanationReport.Card first =
        new ExplanationReport.Card(
            1,
            MARKUP_ID,
            1,
            new float[] {0.25f, 0.75f},
            0.4f,
            List.of(
                new ExplanationReport.Neighbour("n\u0001b", 0.35f, 0, 0.6f),
                new ExplanationReport.Neighbour(LONG_ID, 0.2f, 1, 0.9f)),
            List.of(new int[] {0, 1}),
            5,
            0.05f);
    ExplanationReport.Card second =
        new ExplanationReport.Card(
            2, "plain", 0, new float[] {0.5f, 0.5f}, -1, List.of(), List.of(), 0, 1f);
    return new ExplanationReport(
        "m<1>.heed",
        "g&h.csv",
        6,
        List.of("ok", "<b>risk</b>"),
        1,
        "the 2 nodes named with --nodes",
        "out<",
        2,
        List.of(first, second));
  }

  private static String html() throws Exception {
    StringWriter w = new StringWriter();
    HtmlReport.write(report(), w);
    return w.toString();
  }

  @Test
  void textFromTheFilesIsEscaped() throws Exception {
    String html = html();
    assertFalse(html.contains("<script>alert"), "an id must never become markup");
    assertFalse(html.contains("<b>risk</b>"), "a label must never become markup");
    assertTrue(
        html.contains("&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;q&quot;"));
    assertTrue(html.contains("&lt;b&gt;risk&lt;/b&gt;"));
    assertTrue(html.contains("m&lt;1&gt;.heed") && html.contains("g&amp;h.csv"));
    assertTrue(html.contains("out&lt;"));
    assertEquals(1, count(html, "<script"), "only the page's own script");
    assertTrue(html.contains("n\uFFFDb"), "a control character becomes U+FFFD");
    assertFalse(html.contains("\u0001"));
    assertTrue(html.contains(HtmlReport.shorten(LONG_ID)));
  }

  @Test
  void pageIsSelfContainedWithOneCardAndPicturePerNode() throws Exception {
    String html = html();
    for (String outside : List.of("http:", "https:", "src=", "url(", "@import", "<link")) {
      assertFalse(html.contains(outside), "the page must not load anything: " + outside);
    }
    assertEquals(2, count(html, "<section class=\"card\""));
    assertEquals(2, count(html, "<svg class=\"hood\""));
    assertEquals(1, count(html, "class=\"link\""), "one graph edge between the drawn nodes");
    assertEquals(1, count(html, "class=\"ring\""), "only the first node attends to itself");
    assertTrue(html.contains("2 other nodes (not drawn)"), "5 attended: itself, 2 drawn, 2 more");
    assertTrue(html.contains("Scores, not decisions"));
    assertTrue(html.contains("Attention weights are not proof of cause"));
    assertTrue(html.contains("Check the model on your own data"));
    assertEquals(html, html(), "one report, one page");
  }

  @Test
  void escapeAndShortenKeepCharactersWhole() {
    assertEquals("a&amp;b&lt;c&gt;d&quot;e&#39;f", HtmlReport.escape("a&b<c>d\"e'f"));
    assertEquals("\uD83D\uDE00 \uFFFD", HtmlReport.escape("\uD83D\uDE00 \uDE00"));
    assertEquals("tab\tand\nline", HtmlReport.escape("tab\tand\nline"));
    assertEquals("short", HtmlReport.shorten("short"));
    String shortened = HtmlReport.shorten(LONG_ID);
    assertEquals(16, shortened.codePointCount(0, shortened.length()));
    assertTrue(shortened.startsWith("\uD83D\uDE00") && shortened.endsWith("\u2026"));
  }

  @Test
  void lineWidthIsProportionalToWeight() {
    assertEquals(1, HtmlReport.lineWidth(0f), 1e-12);
    double unit = HtmlReport.lineWidth(1f) - HtmlReport.lineWidth(0f);
    for (float w : new float[] {0.1f, 0.37f, 0.9f}) {
      assertEquals(w * unit, HtmlReport.lineWidth(w) - HtmlReport.lineWidth(0f), 1e-6);
    }
  }

  private static int count(String text, String part) {
    int n = 0;
    for (int i = text.indexOf(part); i >= 0; i = text.indexOf(part, i + 1)) {
      n++;
    }
    return n;
  }
}
