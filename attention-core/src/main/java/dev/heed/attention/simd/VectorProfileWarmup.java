package dev.heed.attention.simd;

import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.IntVector;
import jdk.incubator.vector.VectorMask;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorShuffle;
import jdk.incubator.vector.VectorSpecies;

/**
 * Runs every kind of Vector API operation that Heed's vector loops use, mixed in one loop, {@value
 * #ROUNDS} times, before any of those loops first runs ({@code VectorApiLoader} calls it once,
 * ahead of the first vector implementation it loads). It changes no state of Heed and computes
 * nothing that is used; its only effect is on the type profiles that the JIT collects inside the
 * Vector API's own methods. Internal, not API.
 *
 * <p>Why (measured on JDK 17 here; see {@code DEVELOPERS.md}, "Vector API lessons"): the Vector
 * API's shared methods, such as {@code FloatVector.lanewise(Binary, Vector)} and the operator check
 * {@code opKind} inside it, are compiled on their own early in a JVM's life. If by then they have
 * seen only one class of operator (say the associative {@code ADD} and {@code MUL} of an input
 * check), C2 compiles them assuming that class, and the first {@code SUB} or {@code DIV} to arrive
 * traps and is recorded in those methods' profiles. C2 later adds those recorded traps once per
 * inlined copy when it compiles a large kernel method; a hundred or so vector operations pass the
 * JVM's limit ({@code -XX:PerMethodTrapLimit}, 100), the species stops being a constant, and the
 * kernel runs 2-3x slower in that JVM. When the first calls already mix the operator classes (as
 * here), the profiles are polymorphic from the start, C2 makes no such assumption, and no trap is
 * recorded: with this warm-up, a kernel variant that crossed the limit in every JVM crossed it in
 * none (LogCompilation: 20 class-check traps and {@code ccount='120'} without, 0 traps with). The
 * cost is about 25 ms once per JVM (see {@link #ROUNDS}). Code that uses the Vector API before Heed
 * is loaded can still leave such traps behind; {@code -XX:PerMethodTrapLimit=10000} remains the
 * remedy there.
 *
 * <p>Thread safety: stateless; {@link #run} may be called from any thread, any number of times.
 */
public final class VectorProfileWarmup {

  /**
   * Loop rounds: each calls every operation once. Measured on the kernel variant above (JDK 17, 3
   * JVMs each): 1 round changed nothing, 50 kept the speed, 100 still left 8-9 class-check traps in
   * Vector API methods (under the limit), 200 left none. 200 rounds take about 25 ms once, after
   * the Vector API's own first-use set-up (35-70 ms, paid by any first vector call).
   */
  static final int ROUNDS = 200;

  private static final VectorSpecies<Float> SPECIES = VectorExp.SPECIES;

  private VectorProfileWarmup() {}

  /**
   * Runs the operations.
   *
   * @return a value computed from every round, which callers may ignore (returned so that no JIT
   *     can drop the work)
   */
  public static float run() {
    int lanes = SPECIES.length();
    float[] a = new float[2 * lanes];
    for (int i = 0; i < a.length; i++) {
      a[i] = (i % 5 - 2) * 0.375f;
    }
    float[] b = new float[lanes];
    VectorShuffle<Float> swap = VectorShuffle.fromOp(SPECIES, i -> i ^ 1);
    float total = 0f;
    for (int r = 0; r < ROUNDS; r++) {
      FloatVector x = FloatVector.fromArray(SPECIES, a, 0);
      FloatVector y = FloatVector.fromArray(SPECIES, a, lanes);
      // binary lanewise operations of each operator class: associative (add, mul, max, min) and
      // plain binary (sub, div), then the ternary fma
      FloatVector z = x.add(y).mul(y).sub(x).max(y).min(x).div(2f).fma(y, x);
      z = z.add(FloatVector.broadcast(SPECIES, 1f)).mul(0.5f).sub(0.25f).max(-1f);
      // a unary operation, comparisons, masks and blends
      z = z.neg().max(z);
      VectorMask<Float> below = x.lt(y);
      z = z.blend(0f, below).blend(y, z.compare(VectorOperators.GE, x));
      boolean finite = z.eq(z).allTrue();
      // integer lanes, as in the exponential's scale bits and the sparse kernel's bfloat16 rows
      // (shifts both ways, and, or; the last mask keeps the bits a small finite float)
      IntVector bits = (IntVector) z.reinterpretAsInts();
      z =
          bits.add(1)
              .lanewise(VectorOperators.LSHL, 1)
              .or(bits.lanewise(VectorOperators.LSHR, 16))
              .and(0x3FFFFFFF)
              .reinterpretAsFloats()
              .mul(0f)
              .add(z);
      // lane permutations and reductions, as in the horizontal sums
      z = z.add(z.rearrange(swap));
      z.intoArray(b, 0);
      total += z.reduceLanes(VectorOperators.MAX) + z.lane(0) + b[lanes - 1] + (finite ? 1f : 0f);
      a[r % a.length] += 1e-3f;
    }
    return total;
  }
}
