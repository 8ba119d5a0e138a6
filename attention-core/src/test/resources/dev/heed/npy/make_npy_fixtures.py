"""Writes the .npy/.npz fixtures read by dev.heed.npy.NpyTest and NpzTest.

Run from this directory with python3 and NumPy (any 1.x or 2.x): python3 make_npy_fixtures.py
Every array is generated from fixed formulas (no randomness), so the Java tests can recompute the
expected values: element k of each array is value(k) below.
"""
import numpy as np


def values(n, dtype):
    k = np.arange(n, dtype=np.float64)
    if np.issubdtype(dtype, np.floating):
        return (0.5 * k - 3.25 + 0.001 * k * k).astype(dtype)
    return (7 * k - 11).astype(dtype)


def main():
    np.save("f4_2x3.npy", values(6, np.float32).reshape(2, 3))
    np.save("f8_4.npy", values(4, np.float64))
    np.save("i4_3x1x2.npy", values(6, np.int32).reshape(3, 1, 2))
    np.save("i8_5.npy", values(5, np.int64))
    np.save("f4_scalar.npy", np.array(values(1, np.float32)[0]))
    np.save("f4_0x3.npy", np.zeros((0, 3), dtype=np.float32))
    # Not accepted, each for a documented reason.
    np.save("be_f4.npy", values(6, np.float32).astype(">f4").reshape(2, 3))
    np.save("fortran_f4.npy", np.asfortranarray(values(6, np.float32).reshape(2, 3)))
    np.save("object.npy", np.array([{"a": 1}, None], dtype=object), allow_pickle=True)
    np.save("bool.npy", np.array([True, False]))
    arrays = {
        "weight": values(6, np.float32).reshape(2, 3),
        "bias": values(3, np.float64),
        "ids": values(4, np.int64),
    }
    np.savez("plain.npz", **arrays)
    np.savez_compressed("compressed.npz", **arrays)


if __name__ == "__main__":
    main()
