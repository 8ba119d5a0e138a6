/**
 * The sparse (CSR) attention kernel, contributed to {@code dev.heed.core} as an {@link
 * dev.heed.attention.AttentionKernelProvider} service: applications require {@code dev.heed.core}
 * only and call {@code AttentionKernels.forPath(ComputePath.SPARSE, options)}; with this module on
 * the module path, service binding resolves it. It exports no package to applications.
 *
 * <p>The descriptor does not name {@code jdk.incubator.vector} (javac on JDK 17 warns about every
 * incubator module it resolves, which would fail the warnings-as-errors pass): when the JVM reads
 * that module, the kernel makes this module read it before loading its Vector API loops.
 */
module dev.heed.sparse {
  requires dev.heed.core;
  requires org.slf4j;

  // The core's VectorApiLoader creates the Vector API loops by name.
  exports dev.heed.sparse.simd to
      dev.heed.core;

  provides dev.heed.attention.AttentionKernelProvider with
      dev.heed.sparse.CsrAttentionKernelProvider;
}
