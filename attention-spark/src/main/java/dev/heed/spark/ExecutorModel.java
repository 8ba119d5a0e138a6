package dev.heed.spark;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.model.LayerSteps;
import dev.heed.model.ModelFile;
import dev.heed.npy.NpyLimits;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.Map;
import java.util.concurrent.ConcurrentHashMap;

/**
 * The model as the executors see it: read once per JVM from the broadcast model file's bytes (keyed
 * by their content), with one single-threaded sparse kernel per JVM (Spark runs one task per core,
 * so the kernel takes no threads of its own).
 *
 * <p>Thread safety: safe; tasks of one executor share the cached model and kernel.
 */
final class ExecutorModel {

  private static final Map<String, LayerSteps> MODELS = new ConcurrentHashMap<>();

  private ExecutorModel() {}

  /** The model stored in {@code bytes}, read and checked on first use in this JVM. */
  static LayerSteps steps(byte[] bytes) {
    String key = bytes.length + ":" + java.util.Arrays.hashCode(bytes);
    return MODELS.computeIfAbsent(
        key,
        k -> {
          try {
            return LayerSteps.of(
                ModelFile.read(
                    new ByteArrayInputStream(bytes), "the broadcast model", NpyLimits.defaults()));
          } catch (IOException e) {
            throw new UncheckedIOException(e);
          }
        });
  }

  /** The sparse kernel, one thread per call. */
  static AttentionKernel kernel() {
    return Kernel.SPARSE;
  }

  /** Runs layers {@code from..to-1}, none of which attends, over {@code rows} rows. */
  static float[] perNode(LayerSteps steps, int from, int to, float[] x, int rows) {
    float[] y = x;
    for (int l = from; l < to; l++) {
      y = steps.perNode(l, y, rows);
    }
    return y;
  }

  /** The index of the first attention layer at or after {@code from}, or the layer count. */
  static int nextAttention(LayerSteps steps, int from) {
    int l = from;
    while (l < steps.layerCount() && !steps.attends(l)) {
      l++;
    }
    return l;
  }

  private static final class Kernel {
    static final AttentionKernel SPARSE =
        AttentionKernels.forPath(ComputePath.SPARSE, KernelOptions.defaults().withThreads(1));

    private Kernel() {}
  }
}
