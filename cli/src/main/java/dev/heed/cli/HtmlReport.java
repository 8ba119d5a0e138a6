package dev.heed.cli;

import java.io.IOException;
import java.io.Writer;
import java.util.List;
import java.util.Locale;

/**
 * Writes an {@link ExplanationReport} as one self-contained HTML page: inline CSS, inline SVG and a
 * few lines of inline script (hover highlighting, a filter box); nothing is fetched from anywhere.
 * Every text from the input files (ids, labels, names) is escaped, so ids may be any string.
 *
 * <p>Each node gets a card: its neighbourhood drawn with a fixed layout (the node in the centre,
 * the drawn nodes on a circle clockwise from the top, heaviest first; a line's width proportional
 * to its attention weight; the weight the node gave itself as a ring around it; graph edges among
 * the drawn nodes dashed), its class probabilities as bars, and the weights as a table. The page
 * carries the cautions that go with any such scores. The same report gives the same bytes.
 *
 * <p>Thread safety: stateless.
 */
final class HtmlReport {

  /** Colours of class labels by label index, cycling (chosen to stay apart on a light page). */
  static final List<String> LABEL_COLOURS =
      List.of(
          "#2b6f9e", "#c0622f", "#5e8c31", "#8a5aa8", "#c79a1e", "#2f8f83", "#b03f63", "#6b7280");

  private static final int WIDTH = 560;
  private static final int HEIGHT = 400;
  private static final double CX = WIDTH / 2.0;
  private static final double CY = HEIGHT / 2.0;
  private static final double ORBIT = 128;
  private static final double CENTRE_RADIUS = 20;
  private static final double NODE_RADIUS = 11;
  private static final int ID_CHARACTERS = 16;

  private HtmlReport() {}

  /**
   * Writes the page.
   *
   * @param report what to show (not modified)
   * @param out where the HTML goes; flushed, not closed
   * @throws IOException if writing fails
   */
  static void write(ExplanationReport report, Writer out) throws IOException {
    StringBuilder h = new StringBuilder(1 << 14);
    head(report, h);
    out.write(h.toString());
    for (ExplanationReport.Card card : report.cards()) {
      h.setLength(0);
      card(report, card, h);
      out.write(h.toString());
    }
    h.setLength(0);
    tail(h);
    out.write(h.toString());
    out.flush();
  }

  private static void head(ExplanationReport r, StringBuilder h) {
    String focus = r.labels().get(r.focusClass());
    h.append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
        .append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n")
        .append("<title>Explained predictions: ")
        .append(escape(r.modelName()))
        .append(" on ")
        .append(escape(r.graphName()))
        .append("</title>\n<style>\n")
        .append(STYLE)
        .append("</style>\n</head>\n<body>\n<header class=\"top\">\n")
        .append("<h1>Explained predictions</h1>\n<p class=\"meta\">Model <b>")
        .append(escape(r.modelName()))
        .append("</b> on graph <b>")
        .append(escape(r.graphName()))
        .append("</b> (")
        .append(String.format(Locale.ROOT, "%,d", r.nodeCount()))
        .append(" nodes). Showing ")
        .append(escape(r.selection()))
        .append(".</p>\n</header>\n");
    h.append(
        """
        <aside class="caution" role="note">
        <h2>Read this first</h2>
        <ul>
        <li><b>Scores, not decisions.</b> Every number on this page is a model score. A high score \
        is a reason to look closer, never a verdict about a person or an account.</li>
        <li><b>Attention weights are not proof of cause.</b> They show which nodes the model drew \
        on, not why a prediction is right, and not that a neighbour caused anything.</li>
        <li><b>Validate before you rely on it.</b> Check the model on your own data, and follow the \
        laws and rules that apply where you use it.</li>
        </ul>
        </aside>
        """);
    h.append("<section class=\"guide\">\n<h2>How to read the pictures</h2>\n<p>");
    if (r.layerName() == null) {
      h.append("This model has no attention layer, so no neighbourhood is drawn.");
    } else {
      h.append("Each node sits in the centre. Around it, clockwise from the top and heaviest")
          .append(" first, are the nodes that its last attention layer, <b>")
          .append(escape(r.layerName()))
          .append("</b>, weighted most (")
          .append(r.layerHeads() == 1 ? "its one head" : "mean over " + r.layerHeads() + " heads")
          .append("). A line&rsquo;s width is proportional to its weight; the ring around the")
          .append(" centre is the weight the node gave itself; dashed lines are graph edges")
          .append(" between the drawn nodes. Hover a node or a table row to pair them.");
    }
    h.append(" Colours show each node&rsquo;s predicted label:</p>\n<ul class=\"legend\">\n");
    for (int c = 0; c < r.labels().size(); c++) {
      h.append("<li><span class=\"swatch\" style=\"background:")
          .append(colour(c))
          .append("\"></span>")
          .append(escape(r.labels().get(c)))
          .append(c == r.focusClass() ? " <i>(ranked by)</i>" : "")
          .append("</li>\n");
    }
    h.append("</ul>\n</section>\n");

    h.append("<section class=\"index\">\n<h2>Nodes in this report</h2>\n")
        .append("<p><label>Filter by id <input id=\"filter\" type=\"search\"")
        .append(" autocomplete=\"off\"></label></p>\n<table>\n<thead><tr><th class=\"num\">#</th>")
        .append("<th>node</th><th>predicted</th><th class=\"num\">P(")
        .append(escape(focus))
        .append(")</th></tr></thead>\n<tbody>\n");
    for (ExplanationReport.Card card : r.cards()) {
      float p = card.probabilities()[r.focusClass()];
      h.append("<tr data-id=\"")
          .append(escape(card.id()))
          .append("\"><td class=\"num\">")
          .append(card.rank())
          .append("</td><td class=\"nid\"><a href=\"#card-")
          .append(card.rank())
          .append("\">")
          .append(escape(card.id()))
          .append("</a></td><td>");
      chip(r, card.labelIndex(), h);
      h.append("</td><td class=\"num\"><span class=\"mini\"><span style=\"width:")
          .append(percent(p))
          .append(";background:")
          .append(colour(r.focusClass()))
          .append("\"></span></span>")
          .append(decimal(p))
          .append("</td></tr>\n");
    }
    h.append("</tbody>\n</table>\n</section>\n<main>\n");
  }

  private static void card(ExplanationReport r, ExplanationReport.Card card, StringBuilder h) {
    String key = "c" + card.rank();
    float focusProbability = card.probabilities()[r.focusClass()];
    h.append("<section class=\"card\" id=\"card-")
        .append(card.rank())
        .append("\" data-id=\"")
        .append(escape(card.id()))
        .append("\">\n<h2><span class=\"rank\">")
        .append(card.rank())
        .append("</span> <span class=\"nid\">")
        .append(escape(card.id()))
        .append("</span></h2>\n<p class=\"verdict\">Predicted ");
    chip(r, card.labelIndex(), h);
    h.append(' ').append(decimal(card.probabilities()[card.labelIndex()]));
    if (card.labelIndex() != r.focusClass()) {
      h.append(" &middot; P(")
          .append(escape(r.labels().get(r.focusClass())))
          .append(") ")
          .append(decimal(focusProbability));
    }
    if (r.layerName() != null) {
      h.append(" &middot; attends to ").append(count(card.attended(), "node"));
    }
    h.append("</p>\n<div class=\"body\">\n");
    picture(r, card, key, h);
    h.append("<div class=\"side\">\n<h3>Class probabilities</h3>\n<div class=\"bars\">\n");
    for (int c = 0; c < r.labels().size(); c++) {
      float p = card.probabilities()[c];
      h.append("<div class=\"bar")
          .append(c == card.labelIndex() ? " predicted" : "")
          .append(c == r.focusClass() ? " focus" : "")
          .append("\"><span class=\"bl\">")
          .append(escape(r.labels().get(c)))
          .append("</span><span class=\"bt\"><span class=\"bf\" style=\"width:")
          .append(percent(p))
          .append(";background:")
          .append(colour(c))
          .append("\"></span></span><span class=\"bv\">")
          .append(decimal(p))
          .append("</span></div>\n");
    }
    h.append("</div>\n");
    if (r.layerName() != null) {
      weights(r, card, key, h);
    }
    h.append("</div>\n</div>\n</section>\n");
  }

  private static void weights(
      ExplanationReport r, ExplanationReport.Card card, String key, StringBuilder h) {
    h.append(
            "<h3>Attention weights</h3>\n<table class=\"weights\">\n<thead><tr><th class=\"num\">#</th>")
        .append(
            "<th>node</th><th class=\"num\">weight</th><th>its prediction</th></tr></thead>\n<tbody>\n");
    if (card.selfWeight() >= 0) {
      h.append("<tr data-link=\"")
          .append(key)
          .append("-self\"><td class=\"num\">&ndash;</td><td><i>itself</i></td>");
      weightCell(card.selfWeight(), h);
      h.append("<td></td></tr>\n");
    }
    List<ExplanationReport.Neighbour> neighbours = card.neighbours();
    for (int i = 0; i < neighbours.size(); i++) {
      ExplanationReport.Neighbour nb = neighbours.get(i);
      h.append("<tr data-link=\"")
          .append(key)
          .append('-')
          .append(i)
          .append("\"><td class=\"num\">")
          .append(i + 1)
          .append("</td><td class=\"nid\">")
          .append(escape(nb.id()))
          .append("</td>");
      weightCell(nb.weight(), h);
      h.append("<td class=\"pred\">");
      chip(r, nb.labelIndex(), h);
      h.append(' ').append(decimal(nb.probability())).append("</td></tr>\n");
    }
    if (card.otherCount() > 0) {
      h.append("<tr class=\"other\"><td></td><td>")
          .append(count(card.otherCount(), "other node"))
          .append(" (not drawn)</td>");
      weightCell(card.otherWeight(), h);
      h.append("<td>together</td></tr>\n");
    }
    h.append("</tbody>\n</table>\n");
  }

  private static void weightCell(float weight, StringBuilder h) {
    h.append("<td class=\"num\"><span class=\"mini\"><span style=\"width:")
        .append(percent(weight))
        .append("\"></span></span>")
        .append(decimal(weight))
        .append("</td>");
  }

  /** The neighbourhood as inline SVG: a fixed radial layout, so one report draws one way. */
  private static void picture(
      ExplanationReport r, ExplanationReport.Card card, String key, StringBuilder h) {
    List<ExplanationReport.Neighbour> neighbours = card.neighbours();
    int m = neighbours.size();
    double[] x = new double[m];
    double[] y = new double[m];
    for (int i = 0; i < m; i++) {
      double angle = -Math.PI / 2 + 2 * Math.PI * i / m;
      x[i] = CX + ORBIT * Math.cos(angle);
      y[i] = CY + ORBIT * Math.sin(angle);
    }
    h.append("<svg class=\"hood\" viewBox=\"0 0 ")
        .append(WIDTH)
        .append(' ')
        .append(HEIGHT)
        .append("\" width=\"")
        .append(WIDTH)
        .append("\" height=\"")
        .append(HEIGHT)
        .append("\" role=\"img\" aria-label=\"Attention of node ")
        .append(escape(card.id()))
        .append("\">\n");
    if (m > 0) {
      h.append("<circle class=\"orbit\" cx=\"")
          .append(number(CX))
          .append("\" cy=\"")
          .append(number(CY))
          .append("\" r=\"")
          .append(number(ORBIT))
          .append("\"/>\n");
    }
    for (int[] link : card.links()) {
      h.append("<line class=\"link\" x1=\"")
          .append(number(x[link[0]]))
          .append("\" y1=\"")
          .append(number(y[link[0]]))
          .append("\" x2=\"")
          .append(number(x[link[1]]))
          .append("\" y2=\"")
          .append(number(y[link[1]]))
          .append("\"/>\n");
    }
    for (int i = 0; i < m; i++) {
      ExplanationReport.Neighbour nb = neighbours.get(i);
      h.append("<g class=\"nb\" data-link=\"")
          .append(key)
          .append('-')
          .append(i)
          .append("\"><line class=\"edge\" x1=\"")
          .append(number(CX))
          .append("\" y1=\"")
          .append(number(CY))
          .append("\" x2=\"")
          .append(number(x[i]))
          .append("\" y2=\"")
          .append(number(y[i]))
          .append("\" stroke-width=\"")
          .append(number(lineWidth(nb.weight())))
          .append("\"/><circle class=\"node\" cx=\"")
          .append(number(x[i]))
          .append("\" cy=\"")
          .append(number(y[i]))
          .append("\" r=\"")
          .append(number(NODE_RADIUS))
          .append("\" fill=\"")
          .append(colour(nb.labelIndex()))
          .append("\"><title>")
          .append(escape(nb.id()))
          .append(": weight ")
          .append(decimal(nb.weight()))
          .append("; predicted ")
          .append(escape(r.labels().get(nb.labelIndex())))
          .append(' ')
          .append(decimal(nb.probability()))
          .append("</title></circle>");
      label(i, m, x[i], y[i], nb, h);
      h.append("</g>\n");
    }
    if (card.selfWeight() >= 0) {
      double width = lineWidth(card.selfWeight());
      h.append("<g class=\"nb\" data-link=\"")
          .append(key)
          .append("-self\"><circle class=\"ring\" cx=\"")
          .append(number(CX))
          .append("\" cy=\"")
          .append(number(CY))
          .append("\" r=\"")
          .append(number(CENTRE_RADIUS + 4 + width / 2))
          .append("\" stroke-width=\"")
          .append(number(width))
          .append("\"><title>itself: weight ")
          .append(decimal(card.selfWeight()))
          .append("</title></circle></g>\n");
    }
    h.append("<circle class=\"centre\" cx=\"")
        .append(number(CX))
        .append("\" cy=\"")
        .append(number(CY))
        .append("\" r=\"")
        .append(number(CENTRE_RADIUS))
        .append("\" fill=\"")
        .append(colour(card.labelIndex()))
        .append("\"><title>")
        .append(escape(card.id()))
        .append(": predicted ")
        .append(escape(r.labels().get(card.labelIndex())))
        .append(' ')
        .append(decimal(card.probabilities()[card.labelIndex()]))
        .append("</title></circle>\n");
    if (m == 0) {
      h.append("<text class=\"note\" x=\"")
          .append(number(CX))
          .append("\" y=\"")
          .append(number(CY + CENTRE_RADIUS + 40))
          .append("\" text-anchor=\"middle\">")
          .append(r.layerName() == null ? "no attention layer" : "no other node among the heaviest")
          .append("</text>\n");
    }
    h.append("</svg>\n");
  }

  /** A drawn node's id and weight, outside the circle, anchored away from the centre. */
  private static void label(
      int i, int m, double x, double y, ExplanationReport.Neighbour nb, StringBuilder h) {
    double angle = -Math.PI / 2 + 2 * Math.PI * i / m;
    double ux = Math.cos(angle);
    double uy = Math.sin(angle);
    double px = x + (NODE_RADIUS + 6) * ux;
    double py = y + (NODE_RADIUS + 6) * uy;
    String anchor = ux > 0.25 ? "start" : ux < -0.25 ? "end" : "middle";
    double first = uy < -0.6 ? py - 16 : uy > 0.6 ? py + 10 : py - 2;
    h.append("<text class=\"nl\" x=\"")
        .append(number(px))
        .append("\" y=\"")
        .append(number(first))
        .append("\" text-anchor=\"")
        .append(anchor)
        .append("\">")
        .append(escape(shorten(nb.id())))
        .append("</text><text class=\"wl\" x=\"")
        .append(number(px))
        .append("\" y=\"")
        .append(number(first + 13))
        .append("\" text-anchor=\"")
        .append(anchor)
        .append("\">")
        .append(decimal(nb.weight()))
        .append("</text>");
  }

  private static void chip(ExplanationReport r, int label, StringBuilder h) {
    h.append("<span class=\"chip\" style=\"background:")
        .append(colour(label))
        .append("\">")
        .append(escape(r.labels().get(label)))
        .append("</span>");
  }

  private static void tail(StringBuilder h) {
    h.append("</main>\n<footer>Written by <code>heed classify --report</code>. Scores are")
        .append(" model outputs, not decisions; attention weights are not proof of cause.")
        .append("</footer>\n<script>\n")
        .append(SCRIPT)
        .append("</script>\n</body>\n</html>\n");
  }

  /** Line width for an attention weight in [0, 1]: proportional, with a visible minimum. */
  static double lineWidth(float weight) {
    return 1 + 15 * Math.min(1f, Math.max(0f, weight));
  }

  static String colour(int label) {
    return LABEL_COLOURS.get(label % LABEL_COLOURS.size());
  }

  private static String decimal(float value) {
    return String.format(Locale.ROOT, "%.3f", value);
  }

  private static String percent(float value) {
    return String.format(Locale.ROOT, "%.1f%%", 100 * Math.min(1f, Math.max(0f, value)));
  }

  private static String number(double value) {
    return String.format(Locale.ROOT, "%.1f", value);
  }

  private static String count(int n, String noun) {
    return String.format(Locale.ROOT, "%,d %s%s", n, noun, n == 1 ? "" : "s");
  }

  /** The first characters of a long id and an ellipsis (the full id is in the tooltip). */
  static String shorten(String id) {
    if (id.codePointCount(0, id.length()) <= ID_CHARACTERS) {
      return id;
    }
    return id.substring(0, id.offsetByCodePoints(0, ID_CHARACTERS - 1)) + "\u2026";
  }

  /**
   * Escapes text for HTML element content and quoted attribute values: {@code & < > " '} become
   * character references; control characters and unpaired surrogates, which HTML cannot carry,
   * become U+FFFD.
   */
  static String escape(String text) {
    StringBuilder b = new StringBuilder(text.length() + 16);
    for (int i = 0; i < text.length(); i++) {
      char c = text.charAt(i);
      switch (c) {
        case '&' -> b.append("&amp;");
        case '<' -> b.append("&lt;");
        case '>' -> b.append("&gt;");
        case '"' -> b.append("&quot;");
        case '\'' -> b.append("&#39;");
        default -> {
          if (Character.isHighSurrogate(c)
              && i + 1 < text.length()
              && Character.isLowSurrogate(text.charAt(i + 1))) {
            b.append(c).append(text.charAt(++i));
          } else if (Character.isSurrogate(c)
              || (Character.isISOControl(c) && c != '\t' && c != '\n')) {
            b.append('\uFFFD');
          } else {
            b.append(c);
          }
        }
      }
    }
    return b.toString();
  }

  private static final String STYLE =
      """
      :root { --ink: #1f2a36; --muted: #5f6b78; --paper: #f4f1ea; --card: #fffdf8;
        --line: #ddd6c8; --edge: #34495e; --hot: #e08a00; }
      * { box-sizing: border-box; }
      [hidden] { display: none !important; }
      body { margin: 0 auto; max-width: 1180px; padding: 24px 28px 40px; background: var(--paper);
        color: var(--ink); font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; }
      h1 { font-size: 26px; margin: 0 0 4px; letter-spacing: -0.01em; }
      h2 { font-size: 18px; margin: 0 0 8px; }
      h3 { font-size: 13px; margin: 14px 0 6px; text-transform: uppercase; letter-spacing: 0.06em;
        color: var(--muted); }
      .meta { color: var(--muted); margin: 0 0 16px; }
      .nid, code { font-family: ui-monospace, "SF Mono", Menlo, Consolas, monospace;
        overflow-wrap: anywhere; }
      .caution { background: #fff4d6; border-left: 6px solid #c98b12; border-radius: 6px;
        padding: 12px 18px; margin: 0 0 18px; }
      .caution ul { margin: 0; padding-left: 20px; }
      .guide, .index { background: var(--card); border: 1px solid var(--line); border-radius: 10px;
        padding: 14px 18px; margin: 0 0 18px; }
      .guide p { margin: 0 0 8px; }
      .legend { list-style: none; display: flex; flex-wrap: wrap; gap: 6px 18px; margin: 0;
        padding: 0; }
      .swatch { display: inline-block; width: 12px; height: 12px; border-radius: 50%;
        margin-right: 6px; vertical-align: -1px; }
      table { border-collapse: collapse; width: 100%; }
      th { text-align: left; font-weight: 600; color: var(--muted); font-size: 13px;
        border-bottom: 1px solid var(--line); padding: 4px 8px; }
      td { padding: 3px 8px; border-bottom: 1px solid #eee8dc; vertical-align: middle; }
      th.num, td.num { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
      .index table { max-width: 720px; }
      .index a { color: var(--ink); }
      input[type=search] { font: inherit; padding: 3px 8px; border: 1px solid var(--line);
        border-radius: 6px; margin-left: 6px; }
      .chip { display: inline-block; color: #fff; border-radius: 10px; padding: 0 8px;
        font-size: 13px; line-height: 20px; }
      .mini { display: inline-block; width: 60px; height: 8px; background: #ebe5d8;
        border-radius: 4px; margin-right: 8px; overflow: hidden; vertical-align: 0; }
      .mini > span { display: block; height: 100%; background: var(--edge); }
      .card { background: var(--card); border: 1px solid var(--line); border-radius: 10px;
        padding: 16px 18px; margin: 0 0 18px; break-inside: avoid; }
      .card h2 { font-size: 19px; }
      .rank { display: inline-block; min-width: 30px; text-align: center; background: var(--ink);
        color: #fff; border-radius: 6px; font-size: 14px; margin-right: 6px; padding: 0 6px; }
      .verdict { margin: 0 0 8px; color: var(--muted); }
      .body { display: flex; flex-wrap: wrap; gap: 8px 22px; align-items: flex-start; }
      .side { flex: 1 1 340px; min-width: 300px; }
      svg.hood { max-width: 100%; height: auto; background: #fbf8f1; border-radius: 8px; }
      .orbit { fill: none; stroke: #ebe4d6; stroke-width: 1; }
      .link { stroke: #c4bba9; stroke-width: 1; stroke-dasharray: 3 4; }
      td.pred { white-space: nowrap; }
      .edge { stroke: var(--edge); stroke-opacity: 0.55; stroke-linecap: round; }
      .node { stroke: #fffdf8; stroke-width: 2; }
      .ring { fill: none; stroke: var(--edge); stroke-opacity: 0.55; }
      .centre { stroke: var(--ink); stroke-width: 3; }
      .nl { font: 12px ui-monospace, "SF Mono", Menlo, Consolas, monospace; fill: var(--ink); }
      .wl { font-size: 11px; fill: var(--muted); }
      .note { font-size: 13px; fill: var(--muted); }
      .nb.hot .edge, .nb.hot .ring { stroke: var(--hot); stroke-opacity: 0.9; }
      .nb.hot .node { stroke: var(--hot); stroke-width: 3; }
      .nb.hot .nl { font-weight: 700; }
      tr.hot td { background: #fbecc9; }
      .bar { display: flex; align-items: center; gap: 10px; margin: 3px 0; }
      .bl { flex: 0 0 34%; overflow-wrap: anywhere; }
      .bt { flex: 1; height: 14px; background: #ebe5d8; border-radius: 7px; overflow: hidden; }
      .bf { display: block; height: 100%; border-radius: 7px; }
      .bv { flex: 0 0 48px; text-align: right; font-variant-numeric: tabular-nums; }
      .bar.predicted .bl, .bar.predicted .bv { font-weight: 700; }
      .bar.focus .bl::after { content: " \\25C6"; color: #c98b12; }
      tr.other td { color: var(--muted); font-style: italic; }
      footer { color: var(--muted); font-size: 13px; margin-top: 24px; }
      @media print { body { background: #fff; } .index input { display: none; } }
      """;

  private static final String SCRIPT =
      """
      (function () {
        "use strict";
        function mark(key, on) {
          var all = document.querySelectorAll('[data-link="' + key + '"]');
          for (var i = 0; i < all.length; i++) {
            all[i].classList.toggle("hot", on);
          }
        }
        var linked = document.querySelectorAll("[data-link]");
        for (var i = 0; i < linked.length; i++) {
          (function (el) {
            var key = el.getAttribute("data-link");
            el.addEventListener("mouseenter", function () { mark(key, true); });
            el.addEventListener("mouseleave", function () { mark(key, false); });
          })(linked[i]);
        }
        var filter = document.getElementById("filter");
        filter.addEventListener("input", function () {
          var wanted = filter.value.toLowerCase();
          var items = document.querySelectorAll("[data-id]");
          for (var i = 0; i < items.length; i++) {
            var id = items[i].getAttribute("data-id").toLowerCase();
            items[i].hidden = wanted !== "" && id.indexOf(wanted) < 0;
          }
        });
        document.body.setAttribute("data-ready", "yes");
      })();
      """;
}
