package dev.heed.npy;

import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Optional;
import java.util.Set;

/**
 * What an {@code .npz} archive held: its {@code .npy} entries as arrays (keyed by entry name
 * without the {@code .npy} suffix, as {@code numpy.load} does) and its other entries as raw bytes,
 * each in archive order.
 *
 * <p>Thread safety: immutable; accessors return unmodifiable views or copies.
 */
public final class NpzContents {

  private final Map<String, NpyArray> arrays;
  private final Map<String, byte[]> otherEntries;

  NpzContents(Map<String, NpyArray> arrays, Map<String, byte[]> otherEntries) {
    this.arrays = Collections.unmodifiableMap(new LinkedHashMap<>(arrays));
    this.otherEntries = new LinkedHashMap<>(otherEntries);
  }

  /**
   * Returns the arrays, keyed by entry name without the {@code .npy} suffix, in archive order.
   *
   * @return an unmodifiable map
   */
  public Map<String, NpyArray> arrays() {
    return arrays;
  }

  /**
   * Returns the names of the entries that are not {@code .npy} files, in archive order.
   *
   * @return an unmodifiable set
   */
  public Set<String> otherEntryNames() {
    return Collections.unmodifiableSet(otherEntries.keySet());
  }

  /**
   * Returns a copy of the bytes of an entry that is not a {@code .npy} file.
   *
   * @param name the full entry name
   * @return the bytes, or empty if there is no such entry
   */
  public Optional<byte[]> otherEntry(String name) {
    byte[] b = otherEntries.get(name);
    return b == null ? Optional.empty() : Optional.of(b.clone());
  }
}
