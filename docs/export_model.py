"""Write a Heed model file using only numpy, json and zipfile.

A Heed model file is a zip archive laid out like NumPy's .npz: one JSON entry, model.json, that
describes the model, and one <tensor name>.npy entry per weight tensor. docs/model-format.md is the
full specification; this script is the reference writer for it. Copy it into any training
project (it needs nothing but NumPy), fill in the layer list from your trained weights, and call
write_model().

Example (a two-layer GAT classifier as in Velickovic et al. 2018, for a payments network:
six features per account, each account an ordinary customer, a merchant or part of a mule ring;
weights from your training):

    import numpy as np
    from export_model import write_model
    features = ["account_age_years", "log_mean_amount", "night_share", "log_in_out_ratio",
                "devices_seen", "business_registration"]
    roles = ["ordinary", "merchant", "mule-ring"]
    layers = [
        {"kind": "graph_attention", "name": "gat1", "score": "gat", "heads": 8,
         "head_width": 8, "combine_heads": "concat", "leaky_relu_slope": 0.2,
         "activation": "elu", "bias": True,
         "tensors": {"weight": W1,                 # [6, 8*8]
                     "attention_target": a1_t,     # [8, 8]
                     "attention_source": a1_s,     # [8, 8]
                     "bias": b1}},                 # [64]
        {"kind": "graph_attention", "name": "gat2", "score": "gat", "heads": 1,
         "head_width": 3, "combine_heads": "mean",
         "tensors": {"weight": W2, "attention_target": a2_t, "attention_source": a2_s}},
        {"kind": "softmax", "name": "probabilities"},
    ]
    write_model("payments-gat.heed", input_features=6, class_labels=roles, layers=layers,
                feature_names=features)

Tensors are stored as little-endian float32 in C order (the exporter converts), named
"<layer name>.<role>". Every weight is [in, out] (y = x @ W): a stack that stores a linear
layer's weight as [out, in] (y = x @ W.T) must pass W.T; docs/model-format.md, "Weight layout",
lists every role. The output is deterministic: entries are stored uncompressed with the
timestamp 1980-01-01 00:00:00, in layer order, so the same model always gives the same bytes.

Check vectors: unless checks=False, write_model also runs its own float64 NumPy forward pass
(forward() below, an evaluation of the equations in docs/model-format.md written independently
of Heed) over a small graph and stores the graph, its features and the resulting probabilities
under checks/ in the file. Heed runs the model over them on loading and refuses a model whose
probabilities deviate by more than the tolerance, which catches a weight passed in the wrong
layout even when its shape fits (a square weight transposed). By default the graph is the
8-node sample graph (SAMPLE_CHECK_ROWS) with seeded features; pass checks={"row_offsets": ...,
"columns": ..., "features": ...} to use a few of your own nodes with the graph around them.

Run this file directly to write a tiny example model: python3 export_model.py example.heed
"""
import io
import json
import sys
import zipfile

import numpy as np

FORMAT_NAME = "heed-model"
FORMAT_VERSION = 1
DESCRIPTION_ENTRY = "model.json"
_ENTRY_TIME = (1980, 1, 1, 0, 0, 0)


SAMPLE_CHECK_ROWS = [[0], [], [0, 2, 3], [1, 2, 3, 4], [2, 4, 5, 6, 7], [3, 5], [0, 4, 6, 7],
                     [1, 5, 6, 7]]
"""The sample check graph: row i lists the sources node i attends to. Node 0 has only its
self-loop, node 1 no sources at all (attention gives it zeros). Heed's trainer uses the same."""
SAMPLE_CHECK_SEED = 20180430
DEFAULT_CHECK_TOLERANCE = 1e-4
CHECK_ROLES = ("row_offsets", "columns", "features", "probabilities")

# Hyper-parameters a layer may leave out, with their values (docs/model-format.md).
_DEFAULTS = {
    "graph_attention": {"leaky_relu_slope": 0.2, "activation": "identity", "bias": False,
                        "residual": "none"},
    "self_attention": {"bias": True, "residual": True, "normalization": "none",
                       "norm_epsilon": 1e-5, "feed_forward_width": 0,
                       "feed_forward_activation": "relu"},
    "dense": {"bias": True, "activation": "identity"},
    "softmax": {},
}


def _npy_bytes(array, dtype="<f4"):
    """The .npy encoding (format 1.0) of array as little-endian dtype in C order."""
    data = np.ascontiguousarray(np.asarray(array, dtype=dtype))
    if data.dtype.kind == "f" and not np.all(np.isfinite(data)):
        raise ValueError("values must be finite after conversion to %s" % dtype)
    buffer = io.BytesIO()
    np.lib.format.write_array(buffer, data, version=(1, 0), allow_pickle=False)
    return buffer.getvalue()


def _json_default(value):
    """Lets hyper-parameters be NumPy scalars (np.int64(8), np.float32(0.2), np.bool_(True))."""
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.floating):
        return float(value)
    raise TypeError("cannot write %r (%s) in model.json" % (value, type(value).__name__))


def _add_entry(archive, name, payload):
    info = zipfile.ZipInfo(name, date_time=_ENTRY_TIME)
    info.compress_type = zipfile.ZIP_STORED
    info.external_attr = 0o644 << 16
    archive.writestr(info, payload)


def write_model(path, input_features, class_labels, layers, feature_names=None, checks=True,
                check_tolerance=DEFAULT_CHECK_TOLERANCE, graph=None):
    """Write a model file.

    path: destination file name (or a binary file object).
    input_features: number of features per node the first layer reads.
    class_labels: list of label strings; the last layer must be {"kind": "softmax"} with this
        many inputs.
    layers: list of dicts in the order they run. Each has "kind", "name", the kind's
        hyper-parameters (see docs/model-format.md) and "tensors", a dict from role to a numpy
        array. Arrays are written as "<name>.<role>.npy"; the description refers to them by that
        name.
    feature_names: optional list of input_features strings.
    checks: True (default) for check vectors over the sample graph, a dict with "row_offsets",
        "columns" (a CSR graph: row i attends to columns[row_offsets[i]:row_offsets[i + 1]],
        sorted, at most 256 nodes) and "features" ([nodes, input_features]) for your own, or
        False for none.
    check_tolerance: the largest deviation of a probability Heed accepts, at most 0.01.
    graph: how the training graph was built from its edge list, recorded so that Heed builds the
        graph the same way: a dict {"direction": "symmetrise"|"keep", "self_loops":
        "add"|"as-given", "duplicates": "merge"|"reject"}. Give it whenever you know it.
    """
    description = {
        "format": FORMAT_NAME,
        "format_version": FORMAT_VERSION,
        "input_features": int(input_features),
    }
    if feature_names is not None:
        description["feature_names"] = [str(f) for f in feature_names]
    description["class_labels"] = [str(c) for c in class_labels]
    if graph is not None:
        description["graph"] = {key: str(graph[key])
                                for key in ("direction", "self_loops", "duplicates")}
    described_layers = []
    entries = []
    for layer in layers:
        entry = {k: v for k, v in layer.items() if k != "tensors"}
        roles = {}
        for role, array in layer.get("tensors", {}).items():
            name = "%s.%s" % (layer["name"], role)
            roles[role] = name
            entries.append((name, _npy_bytes(array)))
        entry["tensors"] = roles
        described_layers.append(entry)
    description["layers"] = described_layers
    if checks is not False:
        inputs = sample_check_inputs(input_features) if checks is True else checks
        description["checks"], check_entries = _checks(layers, len(class_labels), input_features,
                                                        inputs, check_tolerance)
        entries += check_entries
    text = json.dumps(description, indent=2, default=_json_default, allow_nan=False) + "\n"
    with zipfile.ZipFile(path, "w") as archive:
        _add_entry(archive, DESCRIPTION_ENTRY, text.encode("utf-8"))
        for name, payload in entries:
            _add_entry(archive, name + ".npy", payload)


def sample_check_inputs(input_features):
    """The sample check graph (SAMPLE_CHECK_ROWS) with seeded features uniform in [-2, 2)."""
    offsets = np.cumsum([0] + [len(r) for r in SAMPLE_CHECK_ROWS])
    columns = [c for r in SAMPLE_CHECK_ROWS for c in r]
    features = np.random.default_rng(SAMPLE_CHECK_SEED).uniform(
        -2, 2, size=(len(SAMPLE_CHECK_ROWS), int(input_features)))
    return {"row_offsets": offsets, "columns": columns, "features": features}


def _checks(layers, classes, input_features, inputs, tolerance):
    """The "checks" description and its (name, .npy bytes) entries."""
    offsets = np.asarray(inputs["row_offsets"], dtype=np.int32)
    columns = np.asarray(inputs["columns"], dtype=np.int32)
    features = np.asarray(inputs["features"], dtype=np.float32)
    nodes = len(offsets) - 1
    if features.shape != (nodes, int(input_features)):
        raise ValueError("check features must have shape %s (nodes, input_features), got %s"
                         % ((nodes, int(input_features)), features.shape))
    probabilities, _ = forward(layers, features, offsets, columns)
    if probabilities.shape != (nodes, classes):
        raise ValueError("the layers give %d outputs per node but there are %d class labels"
                         % (probabilities.shape[1], classes))
    names = {role: "checks/" + role for role in CHECK_ROLES}
    description = {"tolerance": float(tolerance),
                   "computed_by": "docs/export_model.py (float64 NumPy forward pass)",
                   "tensors": names}
    payloads = [(names["row_offsets"], _npy_bytes(offsets, "<i4")),
                (names["columns"], _npy_bytes(columns, "<i4")),
                (names["features"], _npy_bytes(features, "<f4")),
                (names["probabilities"], _npy_bytes(probabilities, "<f8"))]
    return description, payloads


def forward(layers, features, row_offsets, columns):
    """Evaluate the model in float64 over a CSR graph, with NumPy alone.

    An evaluation of the equations in docs/model-format.md written independently of Heed: GAT
    (Velickovic et al. 2018, eqs. 1-6), GATv2 (Brody et al. 2022), multi-head scaled dot-product
    attention and its feed-forward (Vaswani et al. 2017, eqs. 1-2 and section 3.2.2), layer
    normalisation (Ba et al. 2016), ELU (Clevert et al. 2016). Weights and features are rounded
    to float32 first, as the file stores them. O(n^2) per layer: for small graphs only.

    layers: as for write_model. features: [n, input_features]. Row i of the graph lists the
    sources node i attends to: columns[row_offsets[i]:row_offsets[i + 1]].
    Returns (probabilities [n, classes], attention): for each attention layer in order, a list of
    one [n, n] weight matrix per head (row i: the weights node i gives its sources).
    """
    x = _f32(features)
    n = x.shape[0]
    mask = np.zeros((n, n), dtype=bool)
    for i in range(n):
        mask[i, np.asarray(columns)[row_offsets[i]:row_offsets[i + 1]]] = True
    attention = []
    for layer in layers:
        layer = {**_DEFAULTS[layer["kind"]], **layer}
        t = {role: _f32(array) for role, array in layer.get("tensors", {}).items()}
        if layer["kind"] == "graph_attention":
            x, weights = _graph_attention(layer, t, x, mask)
            attention.append(weights)
        elif layer["kind"] == "self_attention":
            x, weights = _self_attention(layer, t, x, mask)
            attention.append(weights)
        elif layer["kind"] == "dense":
            x = _act(layer["activation"], _linear(x, t["weight"], t.get("bias")))
        else:
            x = np.exp(x - x.max(axis=1, keepdims=True))
            x = x / x.sum(axis=1, keepdims=True)
    return x, attention


def _f32(a):
    return np.asarray(a, dtype=np.float32).astype(np.float64)


def _leaky(x, slope):
    return np.where(x > 0, x, slope * x)


def _act(name, x):
    if name == "relu":
        return np.maximum(x, 0)
    if name == "elu":
        return np.where(x > 0, x, np.expm1(np.minimum(x, 0)))
    return x


def _linear(x, weight, bias=None):
    y = x @ weight                                                       # [in, out]: y = x W
    return y if bias is None else y + bias


def _masked_softmax(scores, mask):
    """Row softmax over the allowed entries; a row with none gives zeros."""
    s = np.where(mask, scores, -np.inf)
    top = s.max(axis=1, keepdims=True)
    e = np.exp(s - np.where(np.isfinite(top), top, 0.0))
    total = e.sum(axis=1, keepdims=True)
    return e / np.where(total > 0, total, 1.0)


def _graph_attention(layer, t, h, mask):
    heads, d, slope = layer["heads"], layer["head_width"], layer["leaky_relu_slope"]
    outs, weights = [], []
    for k in range(heads):
        cols = slice(k * d, (k + 1) * d)                                 # head k's columns
        if layer["score"] == "gat":
            z = h @ t["weight"][:, cols]                                 # W h (eq. 1)
            e = _leaky((z @ t["attention_target"][k])[:, None]
                       + (z @ t["attention_source"][k])[None, :], slope)  # a = [a_t || a_s]
            v = z
        else:
            zt = h @ t["target_weight"][:, cols]
            zs = h @ t["source_weight"][:, cols]
            e = np.einsum("ijd,d->ij", _leaky(zt[:, None, :] + zs[None, :, :], slope),
                          t["attention"][k])
            v = zs
        alpha = _masked_softmax(e, mask)                                 # eqs. 2-3
        weights.append(alpha)
        outs.append(alpha @ v)                                           # eq. 4
    out = np.concatenate(outs, axis=1) if layer["combine_heads"] == "concat" else np.mean(outs, 0)
    if layer["bias"]:
        out = out + t["bias"]
    if layer["residual"] == "identity":
        out = out + h
    elif layer["residual"] == "linear":
        out = out + h @ t["residual_weight"]
    return _act(layer["activation"], out), weights


def _layer_norm(x, scale, shift, eps):
    mu = x.mean(axis=1, keepdims=True)
    var = ((x - mu) ** 2).mean(axis=1, keepdims=True)
    return (x - mu) / np.sqrt(var + eps) * scale + shift


def _self_attention(layer, t, x, mask):
    heads, dk, dv = layer["heads"], layer["key_width"], layer["value_width"]
    norm, eps = layer["normalization"], layer["norm_epsilon"]
    allowed = np.ones_like(mask) if layer["pattern"] == "complete" else mask

    def lin(v, role, bias_role):
        return _linear(v, t[role], t[bias_role] if layer["bias"] else None)

    def ln(v, which):
        return _layer_norm(v, t[which + "_norm_scale"], t[which + "_norm_shift"], eps)

    a = ln(x, "attention") if norm == "pre" else x
    q, k, v = (lin(a, "query_weight", "query_bias"), lin(a, "key_weight", "key_bias"),
               lin(a, "value_weight", "value_bias"))
    outs, weights = [], []
    for h in range(heads):
        qh, kh = q[:, h * dk:(h + 1) * dk], k[:, h * dk:(h + 1) * dk]
        alpha = _masked_softmax(qh @ kh.T / np.sqrt(dk), allowed)        # Vaswani eq. 1
        weights.append(alpha)
        outs.append(alpha @ v[:, h * dv:(h + 1) * dv])
    y = lin(np.concatenate(outs, axis=1), "output_weight", "output_bias")  # Concat(heads) W_O
    if layer["residual"]:
        y = y + x
    if norm == "post":
        y = ln(y, "attention")
    if layer["feed_forward_width"] > 0:
        b = ln(y, "feed_forward") if norm == "pre" else y
        z = lin(_act(layer["feed_forward_activation"],
                     lin(b, "feed_forward_weight1", "feed_forward_bias1")),
                "feed_forward_weight2", "feed_forward_bias2")           # Vaswani eq. 2
        if layer["residual"]:
            z = z + y
        y = ln(z, "feed_forward") if norm == "post" else z
    return y, weights


def _example(path):
    """A tiny untrained payments-network classifier with seeded random weights."""
    rng = np.random.default_rng(7)
    features = ["account_age_years", "log_mean_amount", "night_share", "log_in_out_ratio",
                "devices_seen", "business_registration"]
    roles = ["ordinary", "merchant", "mule-ring"]
    heads, width = 2, 3
    layers = [
        {"kind": "graph_attention", "name": "gat1", "score": "gat", "heads": heads,
         "head_width": width, "combine_heads": "concat", "leaky_relu_slope": 0.2,
         "activation": "elu", "bias": True,
         "tensors": {"weight": rng.normal(size=(len(features), heads * width)),
                     "attention_target": rng.normal(size=(heads, width)),
                     "attention_source": rng.normal(size=(heads, width)),
                     "bias": rng.normal(size=(heads * width,))}},
        {"kind": "dense", "name": "classifier", "units": len(roles), "bias": True,
         "tensors": {"weight": rng.normal(size=(heads * width, len(roles))),
                     "bias": np.zeros(len(roles))}},
        {"kind": "softmax", "name": "probabilities"},
    ]
    write_model(path, len(features), roles, layers, feature_names=features)


if __name__ == "__main__":
    _example(sys.argv[1] if len(sys.argv) > 1 else "example.heed")
