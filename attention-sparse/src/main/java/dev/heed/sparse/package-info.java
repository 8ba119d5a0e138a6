/**
 * The sparse (CSR) attention path: a fused, multi-threaded kernel that computes attention row by
 * row over a {@link dev.heed.graph.CsrGraph} or a {@link dev.heed.graph.CompletePattern}, in
 * O(E·H·d) time and at most a few hundred kilobytes of scratch per thread; GAT scores with 8 heads
 * of 8 dims over graphs of more than about 52k nodes also use a packed copy of the keys and values,
 * 320 bytes per node, kept softly referenced between calls (so the garbage collector can take it
 * back when memory runs short).
 *
 * <p>Use it through {@code AttentionKernels.forPath(ComputePath.SPARSE, options)}; this package
 * registers {@link dev.heed.sparse.CsrAttentionKernelProvider} for that. The implementation lives
 * in {@code dev.heed.sparse.internal}, which is not API. Start the JVM with {@code --add-modules
 * jdk.incubator.vector} to run the Vector API inner loops (measured about 5× faster than the plain
 * Java ones on a 1M-node GAT layer, which are used otherwise, with one logged WARN). For graphs of
 * hundreds of MiB, {@code -XX:+UseTransparentHugePages} also helps (random gathers miss the TLB);
 * on Linux the kernel logs that once, at INFO, when a large call finds the process without huge
 * pages. Setting the system property {@code heed.sparse.vector=false} keeps this kernel on the
 * plain loops even when the Vector API is available (a remedy should the vector loops misbehave on
 * some JVM).
 *
 * <p>Threads: each call uses the calling thread plus up to {@code threads - 1} daemon helper
 * threads from one JVM-wide pool ({@code heed-kernel-worker-N}, shared with the dense kernel) that
 * is created on first need and whose idle threads end after 30 s; small calls run on the calling
 * thread alone.
 */
package dev.heed.sparse;
