"""Writes the NumPy-exported model fixture read by dev.heed.model.NumpyExportedModelTest.

Run from this directory: python3 make_model_fixture.py  (needs only NumPy; uses
docs/export_model.py from the repository). Writes:

  mixed.heed            a model file written by docs/export_model.py, using every layer kind
                        and option: GAT (concat, ELU, bias, linear residual), GATv2 (concat,
                        ReLU, identity residual), full self-attention (post-norm, feed-forward),
                        graph-masked self-attention (pre-norm, feed-forward with ELU, no biases),
                        GAT (mean over heads), softmax; with the exporter's check vectors over
                        its sample graph
  graph_row_offsets.npy, graph_columns.npy   the CSR graph (rows are targets, sorted columns;
                        every node has a self-loop, node 5 has only its self-loop)
  features.npy          node features, float32 [n, 5]
  expected_probabilities.npy  float64 [n, 3], the forward pass below
  expected_attention_gat1.npy float64 [E, heads], layer 0's attention weights (CSR entry order)
  expected_attention_full.npy float64 [n*n, heads], layer 2's weights (row-major pairs)

The expected values come from export_model.forward, a plain float64 NumPy evaluation of the
equations written independently of the Java code: GAT per Velickovic et al. 2018 eqs. 1-6, GATv2
per Brody et al. 2022, multi-head scaled dot-product attention per Vaswani et al. 2017 eq. 1 and
section 3.2.2 (eq. 2 for the feed-forward), layer normalisation per Ba et al. 2016, ELU per
Clevert et al. 2016. Weights and features are rounded to float32 first, as the file stores them.
"""
import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "..", "..", "..", "..", "..", "docs"))
from export_model import forward, write_model  # noqa: E402

SEED = 20261201
N, F, CLASSES = 12, 5, 3


def make_graph(rng):
    rows = []
    for i in range(N):
        cols = {i}
        if i != 5:
            cols.update(int(c) for c in rng.choice(N, size=3, replace=False))
            cols.discard(5) if i % 2 else None
        rows.append(sorted(cols))
    offsets = np.zeros(N + 1, dtype=np.int32)
    for i, r in enumerate(rows):
        offsets[i + 1] = offsets[i] + len(r)
    columns = np.array([c for r in rows for c in r], dtype=np.int32)
    return offsets, columns


def make_layers(rng):
    def w(*shape, scale=0.5):
        return rng.normal(scale=scale, size=shape)

    m = 12
    return [
        {"kind": "graph_attention", "name": "gat1", "score": "gat", "heads": 3, "head_width": 4,
         "combine_heads": "concat", "leaky_relu_slope": 0.2, "activation": "elu", "bias": True,
         "residual": "linear",
         "tensors": {"weight": w(F, 12), "attention_target": w(3, 4), "attention_source": w(3, 4),
                     "bias": w(12), "residual_weight": w(F, 12)}},
        {"kind": "graph_attention", "name": "gat2", "score": "gatv2", "heads": 2, "head_width": 6,
         "combine_heads": "concat", "leaky_relu_slope": 0.1, "activation": "relu", "bias": False,
         "residual": "identity",
         "tensors": {"target_weight": w(m, 12), "source_weight": w(m, 12), "attention": w(2, 6)}},
        {"kind": "self_attention", "name": "full", "pattern": "complete", "heads": 3, "key_width": 4,
         "value_width": 4, "bias": True, "residual": True, "normalization": "post",
         "norm_epsilon": 1e-5, "feed_forward_width": 16, "feed_forward_activation": "relu",
         "tensors": {"query_weight": w(m, 12), "key_weight": w(m, 12), "value_weight": w(m, 12),
                     "output_weight": w(12, m), "query_bias": w(12), "key_bias": w(12),
                     "value_bias": w(12), "output_bias": w(m),
                     "attention_norm_scale": 1 + w(m, scale=0.1), "attention_norm_shift": w(m, scale=0.1),
                     "feed_forward_weight1": w(m, 16), "feed_forward_bias1": w(16),
                     "feed_forward_weight2": w(16, m), "feed_forward_bias2": w(m),
                     "feed_forward_norm_scale": 1 + w(m, scale=0.1),
                     "feed_forward_norm_shift": w(m, scale=0.1)}},
        {"kind": "self_attention", "name": "masked", "pattern": "graph", "heads": 2, "key_width": 5,
         "value_width": 6, "bias": False, "residual": True, "normalization": "pre",
         "norm_epsilon": 1e-3, "feed_forward_width": 8, "feed_forward_activation": "elu",
         "tensors": {"query_weight": w(m, 10), "key_weight": w(m, 10), "value_weight": w(m, 12),
                     "output_weight": w(12, m),
                     "attention_norm_scale": 1 + w(m, scale=0.1), "attention_norm_shift": w(m, scale=0.1),
                     "feed_forward_weight1": w(m, 8), "feed_forward_weight2": w(8, m),
                     "feed_forward_norm_scale": 1 + w(m, scale=0.1),
                     "feed_forward_norm_shift": w(m, scale=0.1)}},
        {"kind": "graph_attention", "name": "out", "score": "gat", "heads": 2, "head_width": CLASSES,
         "combine_heads": "mean", "leaky_relu_slope": 0.2, "activation": "identity", "bias": True,
         "residual": "none",
         "tensors": {"weight": w(m, 2 * CLASSES), "attention_target": w(2, CLASSES),
                     "attention_source": w(2, CLASSES), "bias": w(CLASSES)}},
        {"kind": "softmax", "name": "probabilities"},
    ]


def main():
    rng = np.random.default_rng(SEED)
    offsets, columns = make_graph(rng)
    mask = np.zeros((N, N), dtype=bool)
    for i in range(N):
        mask[i, columns[offsets[i]:offsets[i + 1]]] = True
    features = rng.normal(size=(N, F)).astype(np.float32)
    layers = make_layers(rng)
    write_model(os.path.join(HERE, "mixed.heed"), F, ["alpha", "beta", "gamma"], layers,
                feature_names=["f%d" % i for i in range(F)])
    probabilities, attention = forward(layers, features, offsets, columns)
    np.save(os.path.join(HERE, "graph_row_offsets.npy"), offsets)
    np.save(os.path.join(HERE, "graph_columns.npy"), columns)
    np.save(os.path.join(HERE, "features.npy"), features)
    np.save(os.path.join(HERE, "expected_probabilities.npy"), probabilities)
    gat1 = np.stack([w[mask] for w in attention[0]], axis=1)           # [E, heads], CSR order
    np.save(os.path.join(HERE, "expected_attention_gat1.npy"), gat1)
    full = np.stack([w.reshape(-1) for w in attention[2]], axis=1)     # [n*n, heads]
    np.save(os.path.join(HERE, "expected_attention_full.npy"), full)


if __name__ == "__main__":
    main()
