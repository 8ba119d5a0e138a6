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
"<layer name>.<role>". The output is deterministic: entries are stored uncompressed with the
timestamp 1980-01-01 00:00:00, in layer order, so the same model always gives the same bytes.

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


def _npy_bytes(array):
    """The .npy encoding (format 1.0) of array as little-endian float32 in C order."""
    data = np.ascontiguousarray(np.asarray(array, dtype="<f4"))
    if not np.all(np.isfinite(data)):
        raise ValueError("weights must be finite after conversion to float32")
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


def write_model(path, input_features, class_labels, layers, feature_names=None):
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
    """
    description = {
        "format": FORMAT_NAME,
        "format_version": FORMAT_VERSION,
        "input_features": int(input_features),
    }
    if feature_names is not None:
        description["feature_names"] = [str(f) for f in feature_names]
    description["class_labels"] = [str(c) for c in class_labels]
    described_layers = []
    tensors = []
    for layer in layers:
        entry = {k: v for k, v in layer.items() if k != "tensors"}
        roles = {}
        for role, array in layer.get("tensors", {}).items():
            name = "%s.%s" % (layer["name"], role)
            roles[role] = name
            tensors.append((name, array))
        entry["tensors"] = roles
        described_layers.append(entry)
    description["layers"] = described_layers
    text = json.dumps(description, indent=2, default=_json_default, allow_nan=False) + "\n"
    with zipfile.ZipFile(path, "w") as archive:
        _add_entry(archive, DESCRIPTION_ENTRY, text.encode("utf-8"))
        for name, array in tensors:
            _add_entry(archive, name + ".npy", _npy_bytes(array))


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
