package dev.heed.cli;

import java.nio.file.Path;
import java.util.Locale;

/**
 * The file formats {@code heed classify} writes predictions in, and how {@code --format} picks one.
 */
enum OutputFormat {
  /** Comma-separated values with a header line (RFC 4180 quoting): see {@link CsvPredictions}. */
  CSV,
  /** JSON Lines: one JSON object per node and line: see {@link JsonLinesPredictions}. */
  JSONL;

  /**
   * Chooses the format from the {@code --format} value and the {@code --out} file: {@code csv} and
   * {@code jsonl} are taken as given; {@code auto} means JSON Lines when the file name ends in
   * {@code .jsonl} or {@code .ndjson} (any case), CSV otherwise (and on stdout).
   *
   * @param option the {@code --format} value: auto, csv or jsonl (any case)
   * @param out the {@code --out} file, or null for stdout
   * @return the format
   * @throws CliException (usage) for any other option value
   */
  static OutputFormat choose(String option, Path out) {
    return switch (option.toLowerCase(Locale.ROOT)) {
      case "csv" -> CSV;
      case "jsonl" -> JSONL;
      case "auto" -> {
        String name = out == null ? "" : out.getFileName().toString().toLowerCase(Locale.ROOT);
        yield name.endsWith(".jsonl") || name.endsWith(".ndjson") ? JSONL : CSV;
      }
      default ->
          throw new CliException(
              "--format must be auto, csv or jsonl, got '" + option + "'", HeedCli.EXIT_USAGE);
    };
  }
}
