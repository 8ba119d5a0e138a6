/**
 * Heed's public API in pure Java: graphs and attention patterns ({@code dev.heed.graph}), the
 * attention kernel interface and score functions ({@code dev.heed.attention}), layers and model
 * files ({@code dev.heed.model}), node classification ({@code dev.heed.classify}) and NumPy files
 * ({@code dev.heed.npy}). The kernels come from other modules as {@link
 * dev.heed.attention.AttentionKernelProvider} services: {@code dev.heed.sparse} and {@code
 * dev.heed.dense}; only those two may use the arithmetic shared between kernels ({@code
 * dev.heed.attention.internal}, {@code dev.heed.attention.simd}).
 *
 * <p>The Vector API code ({@code dev.heed.attention.simd}) is compiled in a pass of its own, and
 * this descriptor does not name {@code jdk.incubator.vector}: javac on JDK 17 warns whenever it
 * resolves an incubator module, which would fail the warnings-as-errors pass that compiles this
 * file. When the JVM was started with {@code --add-modules jdk.incubator.vector}, {@code
 * dev.heed.attention.internal.VectorApiLoader} makes this module read it before loading any vector
 * class.
 */
module dev.heed.core {
  // JGraphTGraphBuilder and JGraphTExport take and return JGraphT graphs.
  requires transitive org.jgrapht.core;
  requires com.fasterxml.jackson.databind;
  requires org.slf4j;

  exports dev.heed.attention;
  exports dev.heed.classify;
  exports dev.heed.graph;
  exports dev.heed.graph.generate;
  exports dev.heed.live;
  exports dev.heed.model;
  exports dev.heed.npy;

  // Shared kernel arithmetic: for the kernel modules only, not API.
  exports dev.heed.attention.internal to
      dev.heed.sparse,
      dev.heed.dense;
  exports dev.heed.attention.simd to
      dev.heed.sparse,
      dev.heed.dense;

  uses dev.heed.attention.AttentionKernelProvider;
  uses dev.heed.attention.internal.MatrixProduct;
}
