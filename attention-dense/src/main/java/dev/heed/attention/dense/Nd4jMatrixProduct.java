package dev.heed.attention.dense;

import dev.heed.attention.internal.DenseStartUp;
import dev.heed.attention.internal.MatrixProduct;
import org.nd4j.linalg.api.buffer.DataType;
import org.nd4j.linalg.api.ndarray.INDArray;
import org.nd4j.linalg.factory.Nd4j;

/**
 * Large projections with BLAS through ND4J's gemm: x and w are copied off-heap, multiplied into a
 * preallocated c-order output, and the result copied back. Found by the core's layers through
 * {@link java.util.ServiceLoader}; public only for that. Not API.
 *
 * <p>Thread safety: each call uses its own arrays; safe from many threads.
 */
public final class Nd4jMatrixProduct implements MatrixProduct {

  static {
    Nd4jQuietStart.ensure(); // before any ND4J class initialises
  }

  /** For {@link java.util.ServiceLoader}. */
  public Nd4jMatrixProduct() {}

  @Override
  public float[] multiply(float[] x, int n, int in, float[] w, int out) {
    DenseStartUp.markStarted(); // before ND4J's first use: AUTO no longer charges its start-up
    INDArray xa = Nd4j.create(x, new long[] {n, in}, 'c');
    INDArray wa = Nd4j.create(w, new long[] {in, out}, 'c');
    INDArray ya = Nd4j.create(DataType.FLOAT, new long[] {n, out}, 'c');
    BlasThreadMode blasThreads = BlasThreadMode.process();
    blasThreads.enterLarge();
    try {
      Nd4j.gemm(xa, wa, ya, false, false, 1.0, 0.0);
    } finally {
      blasThreads.exitLarge();
    }
    return ya.data().asFloat();
  }

  @Override
  public String describe() {
    return "BLAS gemm through ND4J";
  }
}
