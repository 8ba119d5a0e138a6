package dev.heed.sparse.simd;

import dev.heed.attention.internal.FastExp;
import dev.heed.attention.simd.VectorExp;
import dev.heed.sparse.internal.PerHeadMath;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.IntVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorShuffle;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link PerHeadMath} on the Vector API, in the one species {@link VectorExp#SPECIES} (see {@link
 * VectorRowMath}); span tails shorter than a vector finish in scalar code. Results depend only on
 * the span contents and length: the exponential is {@link FastExp}'s polynomial done lane by lane
 * with the same operations as the scalar form, so scalar tails and vector lanes agree bit for bit,
 * and horizontal sums are a fixed pairwise tree of lane permutations and exact lane-wise adds
 * (lanes i and i xor 4, then xor 2, then xor 1; never {@code reduceLanes(ADD)}, whose order is
 * unspecified).
 *
 * <p>That tree is written out in each method that sums lanes, not shared through a helper: C2
 * always inlines the Vector API's own methods, but stops inlining plain ones once a caller's graph
 * passes its node limit ({@code NodeCountInliningCutoff} under {@code -XX:+PrintInlining}), and a
 * helper cut off there receives its vector as a heap object. A shared helper was cut off that way
 * in the per-head path's compiled row loop, which then took 3 % more CPU time per call (dot
 * products, 8 heads × 8 dims, 1 thread). The same holds for the transposing sums of {@link
 * #dotScores} and {@link #dotRow}: one helper for both was not inlined into either loop, and the
 * kernel took 4.5-5× the CPU time per entry.
 *
 * <p>Thread safety: stateless.
 */
final class VectorPerHeadMath implements PerHeadMath {

  private static final VectorSpecies<Float> WIDE = VectorExp.SPECIES;

  private static final int WIDE_LANES = WIDE.length();

  // Lane permutations i -> i xor 4, 2, 1 for the pairwise horizontal sum (8 or 4 lanes).
  private static final VectorShuffle<Float> XOR4 =
      VectorShuffle.fromOp(WIDE, i -> WIDE_LANES >= 8 ? i ^ 4 : i);
  private static final VectorShuffle<Float> XOR2 = VectorShuffle.fromOp(WIDE, i -> i ^ 2);
  private static final VectorShuffle<Float> XOR1 = VectorShuffle.fromOp(WIDE, i -> i ^ 1);

  // Factors for a pair of entries in one vector (dotRow): both kept, or only the first.
  private static final float[] PAIR_LANES = {1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 0, 0, 0, 0};

  // The transposing sums (see dotScores) in the integer view of the same lanes: which input of a
  // pair each lane keeps, as all-ones lanes for a bitwise blend (lanes whose index has bit 0, 1 or
  // 2 set), and the lane permutations i -> i xor 1, 2, 4.
  private static final VectorSpecies<Integer> LANE_BITS =
      VectorSpecies.of(int.class, WIDE.vectorShape());
  private static final IntVector ODD_LANES = lanesWithBit(1);
  private static final IntVector ODD_PAIRS = lanesWithBit(2);
  private static final IntVector UPPER_HALF = lanesWithBit(4);
  private static final VectorShuffle<Integer> SWAP1 = VectorShuffle.fromOp(LANE_BITS, i -> i ^ 1);
  private static final VectorShuffle<Integer> SWAP2 = VectorShuffle.fromOp(LANE_BITS, i -> i ^ 2);
  private static final VectorShuffle<Integer> SWAP4 =
      VectorShuffle.fromOp(LANE_BITS, i -> WIDE_LANES >= 8 ? i ^ 4 : i);

  /** Entries scored together by {@link #dotScores}: one per lane, 8 (256-bit vectors) or none. */
  private static final int GROUP = WIDE_LANES == 8 ? 8 : 0;

  VectorPerHeadMath() {}

  /** All ones in the lanes whose index has {@code bit} set, zeros elsewhere. */
  private static IntVector lanesWithBit(int bit) {
    int[] lanes = new int[WIDE_LANES];
    for (int i = 0; i < WIDE_LANES; i++) {
      lanes[i] = (i & bit) != 0 ? -1 : 0;
    }
    return IntVector.fromArray(LANE_BITS, lanes, 0);
  }

  @Override
  public float dot(float[] a, int ao, float[] b, int bo, int length) {
    float s = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        acc =
            FloatVector.fromArray(WIDE, a, ao + k).fma(FloatVector.fromArray(WIDE, b, bo + k), acc);
      }
      // the horizontal sum, written out (see the class comment)
      if (WIDE_LANES >= 8) {
        acc = acc.add(acc.rearrange(XOR4));
      }
      acc = acc.add(acc.rearrange(XOR2));
      acc = acc.add(acc.rearrange(XOR1));
      s = acc.lane(0);
    }
    for (; k < length; k++) {
      s = Math.fma(a[ao + k], b[bo + k], s);
    }
    return s;
  }

  @Override
  public float gatv2(
      float[] att,
      int ao,
      float[] q,
      int qo,
      float[] key,
      int ko,
      int length,
      float negativeSlope) {
    float s = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        FloatVector z =
            FloatVector.fromArray(WIDE, q, qo + k).add(FloatVector.fromArray(WIDE, key, ko + k));
        acc = FloatVector.fromArray(WIDE, att, ao + k).fma(z.max(z.mul(negativeSlope)), acc);
      }
      // the horizontal sum, written out (see the class comment)
      if (WIDE_LANES >= 8) {
        acc = acc.add(acc.rearrange(XOR4));
      }
      acc = acc.add(acc.rearrange(XOR2));
      acc = acc.add(acc.rearrange(XOR1));
      s = acc.lane(0);
    }
    for (; k < length; k++) {
      float z = q[qo + k] + key[ko + k];
      s = Math.fma(att[ao + k], Math.max(z, z * negativeSlope), s);
    }
    return s;
  }

  /**
   * Scores entries eight at a time, one per lane: each entry's products with the query are summed
   * over the head's key chunks (a multiply, then fused multiply-adds in chunk order), and the eight
   * product vectors are then added lane-wise while being transposed, so that lane t of the result
   * is entry t's score. Each step of that transposing sum keeps, for a pair of vectors, alternate
   * lanes (blends with a constant mask) and adds the other vector's neighbouring lanes (one lane
   * permutation): 14 blends, 7 permutations and 7 adds for eight scores, instead of 3 permutations,
   * 3 adds and a lane extraction for each score. The blends and permutations work on the lanes'
   * bits as integers ({@code bitwiseBlend} with all-ones lanes, an integer shuffle): on JDK 17 a
   * float blend with a mask is a variable blend (three micro-operations on recent Intel cores)
   * where the bitwise one is a single ternary logic instruction, and C2 checks a float shuffle's
   * indexes inside the loop but hoists an integer shuffle's check out of it (CPU time per entry of
   * the whole-row form, 4 × 16 at 10 % density: 0.85×). Every lane is summed in the same fixed
   * tree, ((l0 + l1) + (l2 + l3)) + ((l4 + l5) + (l6 + l7)), so a score depends only on its entry
   * and the query. The remaining entries of a block (fewer than eight) take the last entry's key
   * row in their unused lanes. Without 8-lane vectors, or for key widths per head that are not a
   * multiple of 8, each score is a {@link #dot} (the interface's form).
   */
  @Override
  public boolean dotScores(
      float[] q,
      int qo,
      float[] keys,
      int[] rowBase,
      int count,
      int heads,
      int keyDim,
      float scale,
      float[] s,
      int stride) {
    if (GROUP == 0 || keyDim % WIDE_LANES != 0) {
      return PerHeadMath.super.dotScores(
          q, qo, keys, rowBase, count, heads, keyDim, scale, s, stride);
    }
    boolean finite = true;
    int last = count - 1;
    for (int t = 0; t < count; t += GROUP) {
      int r0 = rowBase[t];
      int r1 = rowBase[Math.min(t + 1, last)];
      int r2 = rowBase[Math.min(t + 2, last)];
      int r3 = rowBase[Math.min(t + 3, last)];
      int r4 = rowBase[Math.min(t + 4, last)];
      int r5 = rowBase[Math.min(t + 5, last)];
      int r6 = rowBase[Math.min(t + 6, last)];
      int r7 = rowBase[Math.min(t + 7, last)];
      for (int h = 0, o = 0; h < heads; h++, o += keyDim) {
        FloatVector qv = FloatVector.fromArray(WIDE, q, qo + o);
        FloatVector p0 = FloatVector.fromArray(WIDE, keys, r0 + o).mul(qv);
        FloatVector p1 = FloatVector.fromArray(WIDE, keys, r1 + o).mul(qv);
        FloatVector p2 = FloatVector.fromArray(WIDE, keys, r2 + o).mul(qv);
        FloatVector p3 = FloatVector.fromArray(WIDE, keys, r3 + o).mul(qv);
        FloatVector p4 = FloatVector.fromArray(WIDE, keys, r4 + o).mul(qv);
        FloatVector p5 = FloatVector.fromArray(WIDE, keys, r5 + o).mul(qv);
        FloatVector p6 = FloatVector.fromArray(WIDE, keys, r6 + o).mul(qv);
        FloatVector p7 = FloatVector.fromArray(WIDE, keys, r7 + o).mul(qv);
        // the second key chunk of each row written out, not as the first pass of the loop below:
        // with no loop between them and the head's first loads, C2 checks the key rows' bounds
        // outside the loop over heads instead of before every load (with the constant offsets of
        // weightedRowSums: 0.89x the CPU time per entry, 4 × 16 at 10 % density)
        if (keyDim >= 2 * WIDE_LANES) {
          int x = o + WIDE_LANES;
          qv = FloatVector.fromArray(WIDE, q, qo + x);
          p0 = FloatVector.fromArray(WIDE, keys, r0 + x).fma(qv, p0);
          p1 = FloatVector.fromArray(WIDE, keys, r1 + x).fma(qv, p1);
          p2 = FloatVector.fromArray(WIDE, keys, r2 + x).fma(qv, p2);
          p3 = FloatVector.fromArray(WIDE, keys, r3 + x).fma(qv, p3);
          p4 = FloatVector.fromArray(WIDE, keys, r4 + x).fma(qv, p4);
          p5 = FloatVector.fromArray(WIDE, keys, r5 + x).fma(qv, p5);
          p6 = FloatVector.fromArray(WIDE, keys, r6 + x).fma(qv, p6);
          p7 = FloatVector.fromArray(WIDE, keys, r7 + x).fma(qv, p7);
        }
        for (int k = 2 * WIDE_LANES; k < keyDim; k += WIDE_LANES) {
          int x = o + k;
          qv = FloatVector.fromArray(WIDE, q, qo + x);
          p0 = FloatVector.fromArray(WIDE, keys, r0 + x).fma(qv, p0);
          p1 = FloatVector.fromArray(WIDE, keys, r1 + x).fma(qv, p1);
          p2 = FloatVector.fromArray(WIDE, keys, r2 + x).fma(qv, p2);
          p3 = FloatVector.fromArray(WIDE, keys, r3 + x).fma(qv, p3);
          p4 = FloatVector.fromArray(WIDE, keys, r4 + x).fma(qv, p4);
          p5 = FloatVector.fromArray(WIDE, keys, r5 + x).fma(qv, p5);
          p6 = FloatVector.fromArray(WIDE, keys, r6 + x).fma(qv, p6);
          p7 = FloatVector.fromArray(WIDE, keys, r7 + x).fma(qv, p7);
        }
        // the transposing sum, written out (see the class comment): pairs of lanes, then pairs of
        // pairs, then halves; lane t ends up holding entry t's sum
        IntVector i0 = (IntVector) p0.reinterpretAsInts();
        IntVector i1 = (IntVector) p1.reinterpretAsInts();
        IntVector i2 = (IntVector) p2.reinterpretAsInts();
        IntVector i3 = (IntVector) p3.reinterpretAsInts();
        IntVector i4 = (IntVector) p4.reinterpretAsInts();
        IntVector i5 = (IntVector) p5.reinterpretAsInts();
        IntVector i6 = (IntVector) p6.reinterpretAsInts();
        IntVector i7 = (IntVector) p7.reinterpretAsInts();
        IntVector a01 =
            (IntVector)
                i0.bitwiseBlend(i1, ODD_LANES)
                    .reinterpretAsFloats()
                    .add(i1.bitwiseBlend(i0, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                    .reinterpretAsInts();
        IntVector a23 =
            (IntVector)
                i2.bitwiseBlend(i3, ODD_LANES)
                    .reinterpretAsFloats()
                    .add(i3.bitwiseBlend(i2, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                    .reinterpretAsInts();
        IntVector a45 =
            (IntVector)
                i4.bitwiseBlend(i5, ODD_LANES)
                    .reinterpretAsFloats()
                    .add(i5.bitwiseBlend(i4, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                    .reinterpretAsInts();
        IntVector a67 =
            (IntVector)
                i6.bitwiseBlend(i7, ODD_LANES)
                    .reinterpretAsFloats()
                    .add(i7.bitwiseBlend(i6, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                    .reinterpretAsInts();
        IntVector b03 =
            (IntVector)
                a01.bitwiseBlend(a23, ODD_PAIRS)
                    .reinterpretAsFloats()
                    .add(a23.bitwiseBlend(a01, ODD_PAIRS).rearrange(SWAP2).reinterpretAsFloats())
                    .reinterpretAsInts();
        IntVector b47 =
            (IntVector)
                a45.bitwiseBlend(a67, ODD_PAIRS)
                    .reinterpretAsFloats()
                    .add(a67.bitwiseBlend(a45, ODD_PAIRS).rearrange(SWAP2).reinterpretAsFloats())
                    .reinterpretAsInts();
        FloatVector e =
            b03.bitwiseBlend(b47, UPPER_HALF)
                .reinterpretAsFloats()
                .add(b47.bitwiseBlend(b03, UPPER_HALF).rearrange(SWAP4).reinterpretAsFloats())
                .mul(scale);
        e.intoArray(s, h * stride + t);
        // e - e is 0 for a finite score, NaN for an infinite or NaN one
        finite &= e.sub(e).compare(VectorOperators.EQ, 0f).allTrue();
      }
    }
    return finite;
  }

  /** Whole rows for 4 heads of 16 key and 16 value floats, with 8-lane vectors. */
  @Override
  public boolean scoresWholeRows(int heads, int keyDim, int valueDim) {
    return GROUP == 8 && heads == 4 && keyDim == 16 && valueDim == 16;
  }

  /**
   * Scores two entries per vector: the eight (entry, head) products, each a multiply and a fused
   * multiply-add over the head's two key chunks, are summed while being transposed as in {@link
   * #dotScores} (the same operations, so the same bits per score), and lane {@code 4e + h} holds
   * entry e's score for head h: the row's scores, entry-major, are stored a vector at a time. Each
   * entry's eight key chunks are loaded at constant offsets from one index, so C2 checks their
   * bounds once per entry, and the eight query chunks stay in registers for the whole row. The
   * maxima are taken lane-wise as the scores are stored (lanes h and h + 4 are head h); then one
   * loop takes each pair's exponentials and adds its value rows into eight accumulator vectors kept
   * in registers for the whole row. An odd last entry is scored twice in its vector; the copy
   * changes no maximum and gets weights of 0.
   */
  @Override
  public boolean dotRow(
      float[] q,
      int qo,
      float[] keys,
      float[] values,
      int[] rowBase,
      int count,
      int heads,
      int keyDim,
      int valueDim,
      float scale,
      float[] w,
      float[] sums,
      float[] out,
      int outOffset) {
    assert scoresWholeRows(heads, keyDim, valueDim);
    // two methods, not one: in one, C2 passed its node limit before inlining the exponential
    // (then called with its vector boxed: 1.2x the CPU time per entry)
    if (!scoreRow(q, qo, keys, rowBase, count, scale, w)) {
      return false;
    }
    expWeightedRow(w, rowBase, count, values, sums, out, outOffset);
    return true;
  }

  /**
   * The scores of dotRow into w, entry-major, and each head's maximum into lanes h and h + 4 of the
   * 8 floats after them (w's span of 4 · count + 8); returns false if a score is not finite.
   */
  private static boolean scoreRow(
      float[] q, int qo, float[] keys, int[] rowBase, int count, float scale, float[] w) {
    FloatVector q0 = FloatVector.fromArray(WIDE, q, qo);
    FloatVector q1 = FloatVector.fromArray(WIDE, q, qo + 8);
    FloatVector q2 = FloatVector.fromArray(WIDE, q, qo + 16);
    FloatVector q3 = FloatVector.fromArray(WIDE, q, qo + 24);
    FloatVector q4 = FloatVector.fromArray(WIDE, q, qo + 32);
    FloatVector q5 = FloatVector.fromArray(WIDE, q, qo + 40);
    FloatVector q6 = FloatVector.fromArray(WIDE, q, qo + 48);
    FloatVector q7 = FloatVector.fromArray(WIDE, q, qo + 56);
    FloatVector high = FloatVector.broadcast(WIDE, Float.NEGATIVE_INFINITY);
    // e - e is 0 for a finite score, NaN for an infinite or NaN one: summed, checked once
    FloatVector check = FloatVector.zero(WIDE);
    int last = count - 1;
    for (int t = 0; t < count; t += 2) {
      int a = rowBase[t];
      int b = rowBase[Math.min(t + 1, last)];
      FloatVector p0 = FloatVector.fromArray(WIDE, keys, a).mul(q0);
      FloatVector p1 = FloatVector.fromArray(WIDE, keys, a + 16).mul(q2);
      FloatVector p2 = FloatVector.fromArray(WIDE, keys, a + 32).mul(q4);
      FloatVector p3 = FloatVector.fromArray(WIDE, keys, a + 48).mul(q6);
      FloatVector p4 = FloatVector.fromArray(WIDE, keys, b).mul(q0);
      FloatVector p5 = FloatVector.fromArray(WIDE, keys, b + 16).mul(q2);
      FloatVector p6 = FloatVector.fromArray(WIDE, keys, b + 32).mul(q4);
      FloatVector p7 = FloatVector.fromArray(WIDE, keys, b + 48).mul(q6);
      p0 = FloatVector.fromArray(WIDE, keys, a + 8).fma(q1, p0);
      p1 = FloatVector.fromArray(WIDE, keys, a + 24).fma(q3, p1);
      p2 = FloatVector.fromArray(WIDE, keys, a + 40).fma(q5, p2);
      p3 = FloatVector.fromArray(WIDE, keys, a + 56).fma(q7, p3);
      p4 = FloatVector.fromArray(WIDE, keys, b + 8).fma(q1, p4);
      p5 = FloatVector.fromArray(WIDE, keys, b + 24).fma(q3, p5);
      p6 = FloatVector.fromArray(WIDE, keys, b + 40).fma(q5, p6);
      p7 = FloatVector.fromArray(WIDE, keys, b + 56).fma(q7, p7);
      // the transposing sum of dotScores
      IntVector i0 = (IntVector) p0.reinterpretAsInts();
      IntVector i1 = (IntVector) p1.reinterpretAsInts();
      IntVector i2 = (IntVector) p2.reinterpretAsInts();
      IntVector i3 = (IntVector) p3.reinterpretAsInts();
      IntVector i4 = (IntVector) p4.reinterpretAsInts();
      IntVector i5 = (IntVector) p5.reinterpretAsInts();
      IntVector i6 = (IntVector) p6.reinterpretAsInts();
      IntVector i7 = (IntVector) p7.reinterpretAsInts();
      IntVector a01 =
          (IntVector)
              i0.bitwiseBlend(i1, ODD_LANES)
                  .reinterpretAsFloats()
                  .add(i1.bitwiseBlend(i0, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                  .reinterpretAsInts();
      IntVector a23 =
          (IntVector)
              i2.bitwiseBlend(i3, ODD_LANES)
                  .reinterpretAsFloats()
                  .add(i3.bitwiseBlend(i2, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                  .reinterpretAsInts();
      IntVector a45 =
          (IntVector)
              i4.bitwiseBlend(i5, ODD_LANES)
                  .reinterpretAsFloats()
                  .add(i5.bitwiseBlend(i4, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                  .reinterpretAsInts();
      IntVector a67 =
          (IntVector)
              i6.bitwiseBlend(i7, ODD_LANES)
                  .reinterpretAsFloats()
                  .add(i7.bitwiseBlend(i6, ODD_LANES).rearrange(SWAP1).reinterpretAsFloats())
                  .reinterpretAsInts();
      IntVector b03 =
          (IntVector)
              a01.bitwiseBlend(a23, ODD_PAIRS)
                  .reinterpretAsFloats()
                  .add(a23.bitwiseBlend(a01, ODD_PAIRS).rearrange(SWAP2).reinterpretAsFloats())
                  .reinterpretAsInts();
      IntVector b47 =
          (IntVector)
              a45.bitwiseBlend(a67, ODD_PAIRS)
                  .reinterpretAsFloats()
                  .add(a67.bitwiseBlend(a45, ODD_PAIRS).rearrange(SWAP2).reinterpretAsFloats())
                  .reinterpretAsInts();
      FloatVector e =
          b03.bitwiseBlend(b47, UPPER_HALF)
              .reinterpretAsFloats()
              .add(b47.bitwiseBlend(b03, UPPER_HALF).rearrange(SWAP4).reinterpretAsFloats())
              .mul(scale);
      e.intoArray(w, 4 * t);
      // a compare and a blend, not max: Java's max of two vectors (NaN and signed zeros) is five
      // instructions, and every score here is finite or caught by the check below
      high = high.blend(e, high.lt(e));
      check = check.add(e.sub(e));
    }
    if (!check.compare(VectorOperators.EQ, 0f).allTrue()) {
      return false;
    }
    high.max(high.rearrange(XOR4)).intoArray(w, 4 * count);
    return true;
  }

  /**
   * The rest of dotRow after the scores: replaces the scores in w by their exponentials after
   * subtracting each head's maximum (in w's lanes h and h + 4 after the scores), adds the weighted
   * value rows into eight accumulator vectors kept in registers for the whole row, writes each
   * head's sum into sums and the normalised row into out. The exponentials of each pair of entries
   * are taken just before that pair's value rows are added: the loop waits for value rows from
   * beyond the first-level cache, and the exponentials fill that wait (0.93× the CPU time per entry
   * of a pass of exponentials before the weighted sum). The sums are the same either way.
   */
  private static void expWeightedRow(
      float[] w,
      int[] rowBase,
      int count,
      float[] values,
      float[] sums,
      float[] out,
      int outOffset) {
    FloatVector max = FloatVector.fromArray(WIDE, w, 4 * count);
    FloatVector total = FloatVector.zero(WIDE);
    FloatVector a0 = FloatVector.zero(WIDE);
    FloatVector a1 = a0;
    FloatVector a2 = a0;
    FloatVector a3 = a0;
    FloatVector a4 = a0;
    FloatVector a5 = a0;
    FloatVector a6 = a0;
    FloatVector a7 = a0;
    int last = count - 1;
    for (int t = 0; t < count; t += 2) {
      int x = 4 * t;
      // an odd count: the last pair's second entry repeats the last one, with weights of 0 (a
      // product, not a conditional blend: a vector that is one of two values after a branch left
      // C2's vector intrinsics, 7x slower)
      FloatVector keep = FloatVector.fromArray(WIDE, PAIR_LANES, t == last ? WIDE_LANES : 0);
      FloatVector p =
          VectorExp.expNonPositive(FloatVector.fromArray(WIDE, w, x).sub(max)).mul(keep);
      p.intoArray(w, x);
      total = total.add(p);
      int r = rowBase[t];
      FloatVector b0 = FloatVector.broadcast(WIDE, w[x]);
      FloatVector b1 = FloatVector.broadcast(WIDE, w[x + 1]);
      FloatVector b2 = FloatVector.broadcast(WIDE, w[x + 2]);
      FloatVector b3 = FloatVector.broadcast(WIDE, w[x + 3]);
      a0 = FloatVector.fromArray(WIDE, values, r).fma(b0, a0);
      a1 = FloatVector.fromArray(WIDE, values, r + 8).fma(b0, a1);
      a2 = FloatVector.fromArray(WIDE, values, r + 16).fma(b1, a2);
      a3 = FloatVector.fromArray(WIDE, values, r + 24).fma(b1, a3);
      a4 = FloatVector.fromArray(WIDE, values, r + 32).fma(b2, a4);
      a5 = FloatVector.fromArray(WIDE, values, r + 40).fma(b2, a5);
      a6 = FloatVector.fromArray(WIDE, values, r + 48).fma(b3, a6);
      a7 = FloatVector.fromArray(WIDE, values, r + 56).fma(b3, a7);
      r = rowBase[Math.min(t + 1, last)];
      b0 = FloatVector.broadcast(WIDE, w[x + 4]);
      b1 = FloatVector.broadcast(WIDE, w[x + 5]);
      b2 = FloatVector.broadcast(WIDE, w[x + 6]);
      b3 = FloatVector.broadcast(WIDE, w[x + 7]);
      a0 = FloatVector.fromArray(WIDE, values, r).fma(b0, a0);
      a1 = FloatVector.fromArray(WIDE, values, r + 8).fma(b0, a1);
      a2 = FloatVector.fromArray(WIDE, values, r + 16).fma(b1, a2);
      a3 = FloatVector.fromArray(WIDE, values, r + 24).fma(b1, a3);
      a4 = FloatVector.fromArray(WIDE, values, r + 32).fma(b2, a4);
      a5 = FloatVector.fromArray(WIDE, values, r + 40).fma(b2, a5);
      a6 = FloatVector.fromArray(WIDE, values, r + 48).fma(b3, a6);
      a7 = FloatVector.fromArray(WIDE, values, r + 56).fma(b3, a7);
    }
    total = total.add(total.rearrange(XOR4));
    float s0 = total.lane(0);
    float s1 = total.lane(1);
    float s2 = total.lane(2);
    float s3 = total.lane(3);
    sums[0] = s0;
    sums[1] = s1;
    sums[2] = s2;
    sums[3] = s3;
    a0.div(s0).intoArray(out, outOffset);
    a1.div(s0).intoArray(out, outOffset + 8);
    a2.div(s1).intoArray(out, outOffset + 16);
    a3.div(s1).intoArray(out, outOffset + 24);
    a4.div(s2).intoArray(out, outOffset + 32);
    a5.div(s2).intoArray(out, outOffset + 40);
    a6.div(s3).intoArray(out, outOffset + 48);
    a7.div(s3).intoArray(out, outOffset + 56);
  }

  /**
   * Scores 64 consecutive entries of one head for both rows at a time in sixteen accumulator
   * vectors (eight entries each, one per lane): per key dimension, eight loads of the transposed
   * keys and one broadcast query float per row feed sixteen independent fused multiply-adds, with
   * no sum across lanes. Leftover entries take eight at a time, then one at a time with the same
   * operations in scalar code, one row after the other, so every score has the same bits wherever
   * it lies in the run.
   */
  @Override
  public boolean dotScoresOfRuns(
      float[] q,
      int qo,
      int qo2,
      float[] columns,
      int columnLength,
      int first,
      int count,
      int heads,
      int keyDim,
      float scale,
      float[] s,
      float[] s2,
      int stride) {
    // e - e is 0 for a finite score, NaN for an infinite or NaN one: summed, checked once
    FloatVector check = FloatVector.zero(WIDE);
    boolean finite = true;
    int vectorEnd = count - count % WIDE_LANES;
    for (int h = 0; h < heads; h++) {
      int qh = qo + h * keyDim;
      int qh2 = qo2 + h * keyDim;
      int ch = h * keyDim * columnLength + first;
      int sh = h * stride;
      int t = 0;
      for (; t <= vectorEnd - 8 * WIDE_LANES; t += 8 * WIDE_LANES) {
        int c = ch + t;
        FloatVector qa = FloatVector.broadcast(WIDE, q[qh]);
        FloatVector qb = FloatVector.broadcast(WIDE, q[qh2]);
        FloatVector e0 = FloatVector.fromArray(WIDE, columns, c);
        FloatVector e1 = FloatVector.fromArray(WIDE, columns, c + WIDE_LANES);
        FloatVector e2 = FloatVector.fromArray(WIDE, columns, c + 2 * WIDE_LANES);
        FloatVector e3 = FloatVector.fromArray(WIDE, columns, c + 3 * WIDE_LANES);
        FloatVector e4 = FloatVector.fromArray(WIDE, columns, c + 4 * WIDE_LANES);
        FloatVector e5 = FloatVector.fromArray(WIDE, columns, c + 5 * WIDE_LANES);
        FloatVector e6 = FloatVector.fromArray(WIDE, columns, c + 6 * WIDE_LANES);
        FloatVector e7 = FloatVector.fromArray(WIDE, columns, c + 7 * WIDE_LANES);
        FloatVector f0 = e0.mul(qb);
        e0 = e0.mul(qa);
        FloatVector f1 = e1.mul(qb);
        e1 = e1.mul(qa);
        FloatVector f2 = e2.mul(qb);
        e2 = e2.mul(qa);
        FloatVector f3 = e3.mul(qb);
        e3 = e3.mul(qa);
        FloatVector f4 = e4.mul(qb);
        e4 = e4.mul(qa);
        FloatVector f5 = e5.mul(qb);
        e5 = e5.mul(qa);
        FloatVector f6 = e6.mul(qb);
        e6 = e6.mul(qa);
        FloatVector f7 = e7.mul(qb);
        e7 = e7.mul(qa);
        for (int k = 1; k < keyDim; k++) {
          c += columnLength;
          qa = FloatVector.broadcast(WIDE, q[qh + k]);
          qb = FloatVector.broadcast(WIDE, q[qh2 + k]);
          FloatVector k0 = FloatVector.fromArray(WIDE, columns, c);
          e0 = k0.fma(qa, e0);
          f0 = k0.fma(qb, f0);
          FloatVector k1 = FloatVector.fromArray(WIDE, columns, c + WIDE_LANES);
          e1 = k1.fma(qa, e1);
          f1 = k1.fma(qb, f1);
          FloatVector k2 = FloatVector.fromArray(WIDE, columns, c + 2 * WIDE_LANES);
          e2 = k2.fma(qa, e2);
          f2 = k2.fma(qb, f2);
          FloatVector k3 = FloatVector.fromArray(WIDE, columns, c + 3 * WIDE_LANES);
          e3 = k3.fma(qa, e3);
          f3 = k3.fma(qb, f3);
          FloatVector k4 = FloatVector.fromArray(WIDE, columns, c + 4 * WIDE_LANES);
          e4 = k4.fma(qa, e4);
          f4 = k4.fma(qb, f4);
          FloatVector k5 = FloatVector.fromArray(WIDE, columns, c + 5 * WIDE_LANES);
          e5 = k5.fma(qa, e5);
          f5 = k5.fma(qb, f5);
          FloatVector k6 = FloatVector.fromArray(WIDE, columns, c + 6 * WIDE_LANES);
          e6 = k6.fma(qa, e6);
          f6 = k6.fma(qb, f6);
          FloatVector k7 = FloatVector.fromArray(WIDE, columns, c + 7 * WIDE_LANES);
          e7 = k7.fma(qa, e7);
          f7 = k7.fma(qb, f7);
        }
        int o = sh + t;
        e0 = e0.mul(scale);
        f0 = f0.mul(scale);
        e0.intoArray(s, o);
        f0.intoArray(s2, o);
        e1 = e1.mul(scale);
        f1 = f1.mul(scale);
        e1.intoArray(s, o + WIDE_LANES);
        f1.intoArray(s2, o + WIDE_LANES);
        e2 = e2.mul(scale);
        f2 = f2.mul(scale);
        e2.intoArray(s, o + 2 * WIDE_LANES);
        f2.intoArray(s2, o + 2 * WIDE_LANES);
        e3 = e3.mul(scale);
        f3 = f3.mul(scale);
        e3.intoArray(s, o + 3 * WIDE_LANES);
        f3.intoArray(s2, o + 3 * WIDE_LANES);
        e4 = e4.mul(scale);
        f4 = f4.mul(scale);
        e4.intoArray(s, o + 4 * WIDE_LANES);
        f4.intoArray(s2, o + 4 * WIDE_LANES);
        e5 = e5.mul(scale);
        f5 = f5.mul(scale);
        e5.intoArray(s, o + 5 * WIDE_LANES);
        f5.intoArray(s2, o + 5 * WIDE_LANES);
        e6 = e6.mul(scale);
        f6 = f6.mul(scale);
        e6.intoArray(s, o + 6 * WIDE_LANES);
        f6.intoArray(s2, o + 6 * WIDE_LANES);
        e7 = e7.mul(scale);
        f7 = f7.mul(scale);
        e7.intoArray(s, o + 7 * WIDE_LANES);
        f7.intoArray(s2, o + 7 * WIDE_LANES);
        FloatVector c03 = e0.sub(e0).add(e1.sub(e1)).add(e2.sub(e2)).add(e3.sub(e3));
        FloatVector c47 = e4.sub(e4).add(e5.sub(e5)).add(e6.sub(e6)).add(e7.sub(e7));
        FloatVector d03 = f0.sub(f0).add(f1.sub(f1)).add(f2.sub(f2)).add(f3.sub(f3));
        FloatVector d47 = f4.sub(f4).add(f5.sub(f5)).add(f6.sub(f6)).add(f7.sub(f7));
        check = check.add(c03).add(c47).add(d03).add(d47);
      }
      for (int row = 0; row < 2; row++) {
        int qr = row == 0 ? qh : qh2;
        float[] out = row == 0 ? s : s2;
        int u = t;
        for (; u < vectorEnd; u += WIDE_LANES) {
          int c = ch + u;
          FloatVector e = FloatVector.fromArray(WIDE, columns, c).mul(q[qr]);
          for (int k = 1; k < keyDim; k++) {
            c += columnLength;
            e =
                FloatVector.fromArray(WIDE, columns, c)
                    .fma(FloatVector.broadcast(WIDE, q[qr + k]), e);
          }
          e = e.mul(scale);
          e.intoArray(out, sh + u);
          check = check.add(e.sub(e));
        }
        for (; u < count; u++) {
          int c = ch + u;
          float e = q[qr] * columns[c];
          for (int k = 1; k < keyDim; k++) {
            c += columnLength;
            e = Math.fma(columns[c], q[qr + k], e);
          }
          e *= scale;
          out[sh + u] = e;
          finite &= Float.isFinite(e);
        }
      }
    }
    return finite && check.compare(VectorOperators.EQ, 0f).allTrue();
  }

  /**
   * Keeps eight accumulator vectors in registers across the block where the value width allows:
   * eight independent chains of fused multiply-adds, where one head's loop of {@link
   * #weightedRowSum} has one or two (each waits for the previous add of its chain). The sums are
   * the same, in the same order.
   */
  @Override
  public void weightedRowSums(
      float[] w,
      int stride,
      int[] rowBase,
      int count,
      int heads,
      int valueDim,
      float[] value,
      float[] acc) {
    int width = heads * valueDim;
    if (valueDim % WIDE_LANES != 0) {
      PerHeadMath.super.weightedRowSums(w, stride, rowBase, count, heads, valueDim, value, acc);
      return;
    }
    // vectors 2m and 2m + 1 belong to one head when a head is two or more vectors wide: one weight
    // broadcast serves both (the loop is bound by loads, and C2 unswitches it on this flag)
    boolean paired = valueDim % (2 * WIDE_LANES) == 0;
    int x = 0;
    for (; x <= width - 8 * WIDE_LANES; x += 8 * WIDE_LANES) {
      int x1 = x + WIDE_LANES;
      int x2 = x1 + WIDE_LANES;
      int x3 = x2 + WIDE_LANES;
      int x4 = x3 + WIDE_LANES;
      int x5 = x4 + WIDE_LANES;
      int x6 = x5 + WIDE_LANES;
      int x7 = x6 + WIDE_LANES;
      // each vector's head: its weights start at head * stride
      int w0 = x / valueDim * stride;
      int w1 = x1 / valueDim * stride;
      int w2 = x2 / valueDim * stride;
      int w3 = x3 / valueDim * stride;
      int w4 = x4 / valueDim * stride;
      int w5 = x5 / valueDim * stride;
      int w6 = x6 / valueDim * stride;
      int w7 = x7 / valueDim * stride;
      FloatVector a0 = FloatVector.fromArray(WIDE, acc, x);
      FloatVector a1 = FloatVector.fromArray(WIDE, acc, x1);
      FloatVector a2 = FloatVector.fromArray(WIDE, acc, x2);
      FloatVector a3 = FloatVector.fromArray(WIDE, acc, x3);
      FloatVector a4 = FloatVector.fromArray(WIDE, acc, x4);
      FloatVector a5 = FloatVector.fromArray(WIDE, acc, x5);
      FloatVector a6 = FloatVector.fromArray(WIDE, acc, x6);
      FloatVector a7 = FloatVector.fromArray(WIDE, acc, x7);
      for (int t = 0; t < count; t++) {
        // the row's eight vectors at constant offsets from one index (see below)
        int r = rowBase[t] + x;
        FloatVector b0 = FloatVector.broadcast(WIDE, w[w0 + t]);
        FloatVector b2 = FloatVector.broadcast(WIDE, w[w2 + t]);
        FloatVector b4 = FloatVector.broadcast(WIDE, w[w4 + t]);
        FloatVector b6 = FloatVector.broadcast(WIDE, w[w6 + t]);
        FloatVector b1 = paired ? b0 : FloatVector.broadcast(WIDE, w[w1 + t]);
        FloatVector b3 = paired ? b2 : FloatVector.broadcast(WIDE, w[w3 + t]);
        FloatVector b5 = paired ? b4 : FloatVector.broadcast(WIDE, w[w5 + t]);
        FloatVector b7 = paired ? b6 : FloatVector.broadcast(WIDE, w[w7 + t]);
        a0 = FloatVector.fromArray(WIDE, value, r).fma(b0, a0);
        a1 = FloatVector.fromArray(WIDE, value, r + WIDE_LANES).fma(b1, a1);
        a2 = FloatVector.fromArray(WIDE, value, r + 2 * WIDE_LANES).fma(b2, a2);
        a3 = FloatVector.fromArray(WIDE, value, r + 3 * WIDE_LANES).fma(b3, a3);
        a4 = FloatVector.fromArray(WIDE, value, r + 4 * WIDE_LANES).fma(b4, a4);
        a5 = FloatVector.fromArray(WIDE, value, r + 5 * WIDE_LANES).fma(b5, a5);
        a6 = FloatVector.fromArray(WIDE, value, r + 6 * WIDE_LANES).fma(b6, a6);
        a7 = FloatVector.fromArray(WIDE, value, r + 7 * WIDE_LANES).fma(b7, a7);
      }
      a0.intoArray(acc, x);
      a1.intoArray(acc, x1);
      a2.intoArray(acc, x2);
      a3.intoArray(acc, x3);
      a4.intoArray(acc, x4);
      a5.intoArray(acc, x5);
      a6.intoArray(acc, x6);
      a7.intoArray(acc, x7);
    }
    for (; x < width; x += WIDE_LANES) {
      int wo = x / valueDim * stride;
      FloatVector a = FloatVector.fromArray(WIDE, acc, x);
      for (int t = 0; t < count; t++) {
        a =
            FloatVector.fromArray(WIDE, value, rowBase[t] + x)
                .fma(FloatVector.broadcast(WIDE, w[wo + t]), a);
      }
      a.intoArray(acc, x);
    }
  }

  @Override
  public void gatherRows(float[] table, int width, int[] rows, int count, float[] out) {
    // vector moves, not System.arraycopy: measured on R-MAT 1M with 8-float key rows, a loop of
    // arraycopy calls made the whole GAT layer about 1.4x slower than these loads and stores
    if (width == WIDE_LANES) {
      for (int t = 0; t < count; t++) {
        FloatVector.fromArray(WIDE, table, rows[t] * WIDE_LANES).intoArray(out, t * WIDE_LANES);
      }
      return;
    }
    int vectorWidth = width - width % WIDE_LANES;
    for (int t = 0; t < count; t++) {
      int from = rows[t] * width;
      int to = t * width;
      int x = 0;
      for (; x < vectorWidth; x += WIDE_LANES) {
        FloatVector.fromArray(WIDE, table, from + x).intoArray(out, to + x);
      }
      for (; x < width; x++) {
        out[to + x] = table[from + x];
      }
    }
  }

  @Override
  public float max(float[] s, int offset, int length) {
    float m = Float.NEGATIVE_INFINITY;
    int k = 0;
    if (length >= WIDE_LANES) {
      // four independent chains: a vector max with Java's semantics is several instructions, and
      // one chain made each block wait for its maxima; max is exact and order-free on finite
      // values, so neither the chains nor the lane order change the result
      FloatVector acc = FloatVector.fromArray(WIDE, s, offset);
      FloatVector acc1 = acc;
      FloatVector acc2 = acc;
      FloatVector acc3 = acc;
      for (k = WIDE_LANES; k <= length - 4 * WIDE_LANES; k += 4 * WIDE_LANES) {
        acc = acc.max(FloatVector.fromArray(WIDE, s, offset + k));
        acc1 = acc1.max(FloatVector.fromArray(WIDE, s, offset + k + WIDE_LANES));
        acc2 = acc2.max(FloatVector.fromArray(WIDE, s, offset + k + 2 * WIDE_LANES));
        acc3 = acc3.max(FloatVector.fromArray(WIDE, s, offset + k + 3 * WIDE_LANES));
      }
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        acc = acc.max(FloatVector.fromArray(WIDE, s, offset + k));
      }
      acc = acc.max(acc1).max(acc2.max(acc3));
      if (WIDE_LANES >= 8) {
        acc = acc.max(acc.rearrange(XOR4));
      }
      acc = acc.max(acc.rearrange(XOR2));
      acc = acc.max(acc.rearrange(XOR1));
      m = acc.lane(0);
    }
    for (; k < length; k++) {
      m = Math.max(m, s[offset + k]);
    }
    return m;
  }

  @Override
  public float expShiftSum(float[] s, int offset, int length, float shift) {
    float sum = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        FloatVector p =
            VectorExp.expNonPositive(FloatVector.fromArray(WIDE, s, offset + k).sub(shift));
        p.intoArray(s, offset + k);
        acc = acc.add(p);
      }
      // the horizontal sum, written out (see the class comment)
      if (WIDE_LANES >= 8) {
        acc = acc.add(acc.rearrange(XOR4));
      }
      acc = acc.add(acc.rearrange(XOR2));
      acc = acc.add(acc.rearrange(XOR1));
      sum = acc.lane(0);
    }
    for (; k < length; k++) {
      float p = FastExp.expNonPositive(s[offset + k] - shift);
      s[offset + k] = p;
      sum += p;
    }
    return sum;
  }

  @Override
  public void weightedRowSum(
      float[] w,
      int wOffset,
      int[] rowBase,
      int count,
      int headOffset,
      float[] value,
      float[] acc,
      int accOffset,
      int length) {
    int x = 0;
    for (; x <= length - WIDE_LANES; x += WIDE_LANES) {
      FloatVector a = FloatVector.fromArray(WIDE, acc, accOffset + x);
      for (int t = 0; t < count; t++) {
        a =
            FloatVector.fromArray(WIDE, value, rowBase[t] + headOffset + x)
                .fma(FloatVector.broadcast(WIDE, w[wOffset + t]), a);
      }
      a.intoArray(acc, accOffset + x);
    }
    for (; x < length; x++) {
      float a = acc[accOffset + x];
      for (int t = 0; t < count; t++) {
        a = Math.fma(w[wOffset + t], value[rowBase[t] + headOffset + x], a);
      }
      acc[accOffset + x] = a;
    }
  }

  @Override
  public void scale(float[] y, int offset, int length, float factor) {
    int k = 0;
    for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
      FloatVector.fromArray(WIDE, y, offset + k).mul(factor).intoArray(y, offset + k);
    }
    for (; k < length; k++) {
      y[offset + k] *= factor;
    }
  }
}
