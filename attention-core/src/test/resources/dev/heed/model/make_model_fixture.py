"""Writes the NumPy-exported model fixture read by dev.heed.model.NumpyExportedModelTest.

Run from this directory: python3 make_model_fixture.py  (needs only NumPy; uses
docs/export_model.py from the repository). Writes:

  mixed.heed            a model file written by docs/export_model.py, using every layer kind
                        and option: GAT (concat, ELU, bias, linear residual), GATv2 (concat,
                        ReLU, identity residual), full self-attention (post-norm, feed-forward),
                        graph-masked self-attention (pre-norm, feed-forward with ELU, no biases),
                        GAT (mean over heads), softmax
  graph_row_offsets.npy, graph_columns.npy   the CSR graph (rows are targets, sorted columns;
                        every node has a self-loop, node 5 has only its self-loop)
  features.npy          node features, float32 [n, 5]
  expected_probabilities.npy  float64 [n, 3], the forward pass below
  expected_attention_gat1.npy float64 [E, heads], layer 0's attention weights (CSR entry order)
  expected_attention_full.npy float64 [n*n, heads], layer 2's weights (row-major pairs)

The forward pass is a plain float64 evaluation of the equations, written independently of the
Java code: GAT per Velickovic et al. 2018 eqs. 1-6, GATv2 per Brody et al. 2022, multi-head
scaled dot-product attention per Vaswani et al. 2017 eq. 1 and section 3.2.2 (eq. 2 for the
feed-forward), layer normalisation per Ba et al. 2016, ELU per Clevert et al. 2016.
Weights and features are rounded to float32 first, as the file stores them.
"""
import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "..", "..", "..", "..", "..", "docs"))
from export_model import write_model  # noqa: E402

SEED = 20261201
N, F, CLASSES = 12, 5, 3


def f32(a):
    return np.asarray(a, dtype=np.float32).astype(np.float64)


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


def leaky(x, slope):
    return np.where(x > 0, x, slope * x)


def elu(x):
    return np.where(x > 0, x, np.expm1(np.minimum(x, 0)))


def act(name, x):
    return {"identity": lambda v: v, "relu": lambda v: np.maximum(v, 0), "elu": elu}[name](x)


def masked_softmax(scores, mask):
    """Row softmax over allowed entries only; scores [n, n], mask [n, n] bool."""
    s = np.where(mask, scores, -np.inf)
    s = s - s.max(axis=1, keepdims=True)
    e = np.where(mask, np.exp(s), 0.0)
    return e / e.sum(axis=1, keepdims=True)


def gat(layer, h, mask):
    t = layer["tensors"]
    heads, d, slope = layer["heads"], layer["head_width"], layer["leaky_relu_slope"]
    outs, weights = [], []
    for k in range(heads):
        cols = slice(k * d, (k + 1) * d)
        if layer["score"] == "gat":
            z = h @ f32(t["weight"])[:, cols]                                  # W h (eq. 1)
            e = leaky((z @ f32(t["attention_target"])[k])[:, None]
                      + (z @ f32(t["attention_source"])[k])[None, :], slope)  # eq. 1 split
            v = z
        else:
            zt = h @ f32(t["target_weight"])[:, cols]
            zs = h @ f32(t["source_weight"])[:, cols]
            a = f32(t["attention"])[k]
            e = np.einsum("ijd,d->ij", leaky(zt[:, None, :] + zs[None, :, :], slope), a)
            v = zs
        alpha = masked_softmax(e, mask)                                        # eqs. 2-3
        weights.append(alpha)
        outs.append(alpha @ v)                                                 # eq. 4
    out = np.concatenate(outs, axis=1) if layer["combine_heads"] == "concat" else np.mean(outs, 0)
    if layer.get("bias"):
        out = out + f32(t["bias"])
    if layer.get("residual") == "identity":
        out = out + h
    elif layer.get("residual") == "linear":
        out = out + h @ f32(t["residual_weight"])
    return act(layer.get("activation", "identity"), out), weights


def layer_norm(x, scale, shift, eps):
    mu = x.mean(axis=1, keepdims=True)
    var = ((x - mu) ** 2).mean(axis=1, keepdims=True)
    return (x - mu) / np.sqrt(var + eps) * f32(scale) + f32(shift)


def self_attention(layer, x, mask):
    t = layer["tensors"]
    heads, dk, dv = layer["heads"], layer["key_width"], layer["value_width"]
    bias = layer["bias"]
    norm, eps = layer["normalization"], layer["norm_epsilon"]
    full = np.ones_like(mask) if layer["pattern"] == "complete" else mask

    def lin(v, w, b):
        y = v @ f32(t[w])
        return y + f32(t[b]) if bias else y

    a = layer_norm(x, t["attention_norm_scale"], t["attention_norm_shift"], eps) if norm == "pre" else x
    q, k, v = lin(a, "query_weight", "query_bias"), lin(a, "key_weight", "key_bias"), lin(a, "value_weight", "value_bias")
    outs, weights = [], []
    for h in range(heads):
        qh, kh, vh = q[:, h * dk:(h + 1) * dk], k[:, h * dk:(h + 1) * dk], v[:, h * dv:(h + 1) * dv]
        alpha = masked_softmax(qh @ kh.T / np.sqrt(dk), full)                 # Vaswani eq. 1
        weights.append(alpha)
        outs.append(alpha @ vh)
    y = lin(np.concatenate(outs, axis=1), "output_weight", "output_bias")     # Concat(heads) W_O
    if layer["residual"]:
        y = y + x
    if norm == "post":
        y = layer_norm(y, t["attention_norm_scale"], t["attention_norm_shift"], eps)
    ff = layer["feed_forward_width"]
    if ff > 0:
        b = layer_norm(y, t["feed_forward_norm_scale"], t["feed_forward_norm_shift"], eps) if norm == "pre" else y
        z = lin(act(layer["feed_forward_activation"], lin(b, "feed_forward_weight1", "feed_forward_bias1")),
                "feed_forward_weight2", "feed_forward_bias2")                   # Vaswani eq. 2
        if layer["residual"]:
            z = z + y
        y = layer_norm(z, t["feed_forward_norm_scale"], t["feed_forward_norm_shift"], eps) if norm == "post" else z
    return y, weights


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


def forward(layers, x, mask):
    attention = []
    for layer in layers:
        if layer["kind"] == "graph_attention":
            x, wts = gat(layer, x, mask)
            attention.append(wts)
        elif layer["kind"] == "self_attention":
            x, wts = self_attention(layer, x, mask)
            attention.append(wts)
        elif layer["kind"] == "softmax":
            e = np.exp(x - x.max(axis=1, keepdims=True))
            x = e / e.sum(axis=1, keepdims=True)
    return x, attention


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
    probabilities, attention = forward(layers, features.astype(np.float64), mask)
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
