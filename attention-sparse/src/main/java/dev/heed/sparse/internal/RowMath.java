package dev.heed.sparse.internal;

import java.util.Objects;

/**
 * One implementation of the CSR kernel's inner loops, in one part per kernel variant: the Vector
 * API one ({@code dev.heed.sparse.simd.VectorRowMath}) or the plain Java one ({@link
 * RowMaths#scalar()}); {@link RowMaths#preferred()} chooses once per JVM.
 *
 * @param name a short name for logs and {@code describe()}, for example {@code "vector(256-bit of
 *     preferred 512-bit)"} or {@code "scalar"}
 * @param servesAllHeads whether the kernel takes the all-heads and factored paths with this
 *     implementation: the vector one does where its vectors hold exactly {@link AllHeadsMath#HEADS}
 *     floats, the scalar one never (its all-heads and factored parts are the bit-for-bit reference
 *     for the vector ones, and slower than its per-head loops)
 * @param perHead the per-head path's loops
 * @param allHeads the all-heads path's loops
 * @param factored the factored path's loops
 */
public record RowMath(
    String name,
    boolean servesAllHeads,
    PerHeadMath perHead,
    AllHeadsMath allHeads,
    FactoredMath factored) {

  /**
   * Checks that every part is present.
   *
   * @throws NullPointerException if an argument is null
   */
  public RowMath {
    Objects.requireNonNull(name, "name");
    Objects.requireNonNull(perHead, "perHead");
    Objects.requireNonNull(allHeads, "allHeads");
    Objects.requireNonNull(factored, "factored");
  }
}
