package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;
import java.awt.BasicStroke;
import java.awt.Color;
import java.awt.Font;
import java.awt.Graphics2D;
import java.awt.RenderingHints;
import java.awt.geom.Rectangle2D;
import java.awt.image.BufferedImage;
import java.io.IOException;
import java.nio.file.Path;
import java.text.DecimalFormat;
import java.util.List;
import java.util.Locale;
import javax.imageio.ImageIO;
import org.jfree.chart.ChartFactory;
import org.jfree.chart.JFreeChart;
import org.jfree.chart.axis.LogAxis;
import org.jfree.chart.axis.NumberTickUnit;
import org.jfree.chart.plot.ValueMarker;
import org.jfree.chart.plot.XYPlot;
import org.jfree.chart.renderer.xy.XYLineAndShapeRenderer;
import org.jfree.chart.title.TextTitle;
import org.jfree.chart.ui.RectangleAnchor;
import org.jfree.chart.ui.RectangleInsets;
import org.jfree.chart.ui.TextAnchor;
import org.jfree.data.xy.XYSeries;
import org.jfree.data.xy.XYSeriesCollection;

/**
 * Draws the sweep as a PNG with JFreeChart, headless: one panel per score, time per call against
 * density on log–log axes, one line per path and node count (solid dense, dashed sparse, one colour
 * per n), and a vertical marker at each crossover found.
 *
 * <p>Thread safety: stateless; sets {@code java.awt.headless=true} if the property is unset.
 */
public final class CrossoverChart {

  /** Width of the image in pixels: {@value}. */
  public static final int WIDTH = 1100;

  /** Height of one score's panel in pixels: {@value}. */
  public static final int PANEL_HEIGHT = 650;

  private static final Color[] PALETTE = {
    new Color(0x1f77b4), new Color(0xd62728), new Color(0x2ca02c), new Color(0x9467bd),
    new Color(0xff7f0e), new Color(0x8c564b), new Color(0x17becf), new Color(0x7f7f7f)
  };

  private CrossoverChart() {}

  /**
   * Writes the chart.
   *
   * @param report the sweep result
   * @param file output PNG, created or replaced
   * @throws IOException if it cannot be written
   */
  public static void writePng(CrossoverReport report, Path file) throws IOException {
    if (System.getProperty("java.awt.headless") == null) {
      System.setProperty("java.awt.headless", "true");
    }
    List<SweepScore> scores = report.config().scores();
    BufferedImage image =
        new BufferedImage(WIDTH, PANEL_HEIGHT * scores.size(), BufferedImage.TYPE_INT_RGB);
    Graphics2D g = image.createGraphics();
    try {
      g.setRenderingHint(RenderingHints.KEY_ANTIALIASING, RenderingHints.VALUE_ANTIALIAS_ON);
      g.setColor(Color.WHITE);
      g.fillRect(0, 0, image.getWidth(), image.getHeight());
      for (int s = 0; s < scores.size(); s++) {
        JFreeChart chart = chart(report, scores.get(s));
        chart.draw(g, new Rectangle2D.Double(0, s * PANEL_HEIGHT, WIDTH, PANEL_HEIGHT));
      }
    } finally {
      g.dispose();
    }
    if (!ImageIO.write(image, "png", file.toFile())) {
      throw new IOException("no PNG writer available to write " + file);
    }
  }

  /**
   * A log axis over {@code [lo, hi]} with a margin of a factor 1.4 each side, one labelled tick per
   * decade; widened to the enclosing powers of ten when no power of ten falls inside.
   */
  private static LogAxis decadeAxis(String label, double lo, double hi, String format) {
    LogAxis axis = new LogAxis(label);
    axis.setBase(10);
    axis.setSmallestValue(1e-9);
    axis.setNumberFormatOverride(new DecimalFormat(format));
    axis.setTickUnit(new NumberTickUnit(1.0), false, true);
    double from = lo / 1.4;
    double to = hi * 1.4;
    if (Math.floor(Math.log10(to)) < Math.ceil(Math.log10(from))) {
      from = Math.pow(10, Math.floor(Math.log10(lo)));
      to = Math.pow(10, Math.ceil(Math.log10(hi)));
      if (to <= from) {
        to = from * 10;
      }
    }
    axis.setRange(from, to);
    return axis;
  }

  /** The {min, max} of the x or y values in {@code data}; {1, 100} when it is empty. */
  private static double[] range(XYSeriesCollection data, boolean x) {
    double lo = Double.POSITIVE_INFINITY;
    double hi = Double.NEGATIVE_INFINITY;
    for (int s = 0; s < data.getSeriesCount(); s++) {
      XYSeries series = data.getSeries(s);
      lo = Math.min(lo, x ? series.getMinX() : series.getMinY());
      hi = Math.max(hi, x ? series.getMaxX() : series.getMaxY());
    }
    return lo > 0 && hi >= lo ? new double[] {lo, hi} : new double[] {1, 100};
  }

  private static JFreeChart chart(CrossoverReport report, SweepScore score) {
    SweepConfig config = report.config();
    XYSeriesCollection data = new XYSeriesCollection();
    XYLineAndShapeRenderer renderer = new XYLineAndShapeRenderer(true, true);
    int series = 0;
    for (int ni = 0; ni < config.nodeCounts().size(); ni++) {
      int n = config.nodeCounts().get(ni);
      Color colour = PALETTE[ni % PALETTE.length];
      for (ComputePath path : ComputePath.values()) {
        XYSeries line = new XYSeries(path.name().toLowerCase(Locale.ROOT) + " n=" + n, true, true);
        for (SweepPoint p : report.points()) {
          if (p.score() == score && p.n() == n && p.path() == path && p.measured()) {
            line.add(p.actualDensity() * 100, p.timing().medianMillis());
          }
        }
        if (line.getItemCount() == 0) {
          continue;
        }
        data.addSeries(line);
        renderer.setSeriesPaint(series, colour);
        renderer.setSeriesStroke(
            series,
            path == ComputePath.DENSE
                ? new BasicStroke(2f)
                : new BasicStroke(
                    2f,
                    BasicStroke.CAP_BUTT,
                    BasicStroke.JOIN_MITER,
                    10f,
                    new float[] {8f, 5f},
                    0f));
        series++;
      }
    }
    JFreeChart chart =
        ChartFactory.createXYLineChart(
            "Dense vs sparse attention, " + score.label() + " scores",
            "density (%)",
            "time per call (ms)",
            data);
    chart.addSubtitle(
        new TextTitle(
            String.format(
                Locale.ROOT,
                "%d heads x %d value dims, %d threads; median of repeated calls, in-process"
                    + " (JMH benchmarks are the authority). Solid: dense, dashed: sparse;"
                    + " vertical lines: crossover.",
                config.heads(),
                config.valueDim(),
                config.threads()),
            new Font(Font.SANS_SERIF, Font.PLAIN, 11)));
    XYPlot plot = chart.getXYPlot();
    plot.setBackgroundPaint(Color.WHITE);
    plot.setDomainGridlinePaint(Color.LIGHT_GRAY);
    plot.setRangeGridlinePaint(Color.LIGHT_GRAY);
    plot.setRenderer(renderer);
    double[] xs = range(data, true);
    double[] ys = range(data, false);
    plot.setDomainAxis(decadeAxis("density (%, log scale)", xs[0], xs[1], "0.###"));
    plot.setRangeAxis(decadeAxis("time per call (ms, log scale)", ys[0], ys[1], "0.####"));
    for (Crossover c : report.crossovers()) {
      if (c.score() != score || c.kind() != Crossover.Kind.FOUND) {
        continue;
      }
      int ni = config.nodeCounts().indexOf(c.n());
      Color colour = PALETTE[Math.max(0, ni) % PALETTE.length];
      ValueMarker marker =
          new ValueMarker(
              c.density() * 100,
              colour,
              new BasicStroke(
                  1.5f,
                  BasicStroke.CAP_BUTT,
                  BasicStroke.JOIN_MITER,
                  10f,
                  new float[] {2f, 3f},
                  0f));
      marker.setLabel("n=" + c.n() + ": " + Formats.percent(c.density()));
      marker.setLabelPaint(colour);
      marker.setLabelFont(new Font(Font.SANS_SERIF, Font.BOLD, 11));
      marker.setLabelAnchor(RectangleAnchor.TOP_RIGHT);
      marker.setLabelTextAnchor(TextAnchor.TOP_LEFT);
      marker.setLabelOffset(new RectangleInsets(5 + 14 * ni, 3, 3, 3));
      plot.addDomainMarker(marker);
    }
    return chart;
  }
}
