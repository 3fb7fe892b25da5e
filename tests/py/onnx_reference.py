"""Checks an ONNX file with the ONNX project's own checker and runs it with
onnxruntime, the reference runtime (both from PyPI; versions pinned in
requirements.txt and printed in the output).

usage: onnx_reference.py MODEL.onnx INPUTS.json
INPUTS.json: {"<input name>": {"shape": [...], "data": [flat float list]}, ...}
prints: {"checker": "ok", "versions": {...}, "inputs": [...], "outputs": {"<name>": {"shape": [...], "data": [...]}}}
"""
import json
import sys

import numpy as np
import onnx
import onnxruntime as ort


def main():
    model_path, inputs_path = sys.argv[1], sys.argv[2]
    model = onnx.load(model_path)
    # full_check also runs shape inference, so a declared output shape that
    # disagrees with what the operators produce is caught too.
    onnx.checker.check_model(model, full_check=True)
    with open(inputs_path) as f:
        spec = json.load(f)
    feeds = {
        name: np.asarray(v["data"], dtype=np.float32).reshape(v["shape"])
        for name, v in spec.items()
    }
    opts = ort.SessionOptions()
    opts.intra_op_num_threads = 1
    session = ort.InferenceSession(model_path, opts, providers=["CPUExecutionProvider"])
    names = [o.name for o in session.get_outputs()]
    results = session.run(names, feeds)
    out = {
        "checker": "ok",
        "versions": {"onnx": onnx.__version__, "onnxruntime": ort.__version__},
        "opset": [{"domain": o.domain, "version": o.version} for o in model.opset_import],
        "ir_version": model.ir_version,
        "inputs": [
            {"name": i.name, "shape": [d.dim_param or d.dim_value for d in i.type.tensor_type.shape.dim]}
            for i in model.graph.input
        ],
        "outputs": {
            n: {"shape": list(r.shape), "data": r.astype(np.float64).ravel().tolist()}
            for n, r in zip(names, results)
        },
    }
    json.dump(out, sys.stdout)


if __name__ == "__main__":
    main()
