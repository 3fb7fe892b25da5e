"""Times ONNX batches with onnxruntime (PyPI), for Nudgebar's bench.

Usage: ort_bench.py SPEC.json

SPEC lists cases: a model file, one input (raw little-endian f32 file and
its shape) and a number of calls per round. Each case runs on one thread
(intra_op_num_threads = inter_op_num_threads = 1, sequential execution,
all graph optimisations on), the match for the engine's single worker
thread. Inputs and outputs are bound once with IOBinding so the timed loop
is onnxruntime's own work, not NumPy conversions.

The script then serves the bench on stdin/stdout, one command per line,
so the bench can alternate its own rounds with onnxruntime's and both see
the same load on a shared machine:
  round I   -> runs one round of case I; prints the per-call time in µs
  output I  -> writes case I's first output (raw f32) to its output_file
  quit
It prints "ready <onnxruntime version>" once the sessions are built.
"""

import json
import sys
import time

import numpy as np
import onnxruntime as ort


def session(model_path):
    options = ort.SessionOptions()
    options.intra_op_num_threads = 1
    options.inter_op_num_threads = 1
    options.execution_mode = ort.ExecutionMode.ORT_SEQUENTIAL
    options.graph_optimization_level = ort.GraphOptimizationLevel.ORT_ENABLE_ALL
    return ort.InferenceSession(model_path, options, providers=["CPUExecutionProvider"])


class Case:
    def __init__(self, spec):
        self.spec = spec
        self.sess = session(spec["model"])
        x = np.fromfile(spec["input_file"], dtype="<f4").reshape(spec["shape"])
        self.binding = self.sess.io_binding()
        self.binding.bind_cpu_input(spec["input_name"], x)
        for out in self.sess.get_outputs():
            self.binding.bind_output(out.name, "cpu")
        self.sess.run_with_iobinding(self.binding)  # warm-up: first runs allocate

    def round(self):
        n = self.spec["iterations"]
        start = time.perf_counter_ns()
        for _ in range(n):
            self.sess.run_with_iobinding(self.binding)
        return (time.perf_counter_ns() - start) / 1e3 / n

    def write_output(self):
        first = self.binding.copy_outputs_to_cpu()[0]
        np.asarray(first, dtype="<f4").tofile(self.spec["output_file"])


def main():
    with open(sys.argv[1]) as f:
        spec = json.load(f)
    cases = [Case(c) for c in spec["cases"]]
    print("ready", ort.__version__, flush=True)
    for line in sys.stdin:
        words = line.split()
        if not words or words[0] == "quit":
            break
        case = cases[int(words[1])]
        if words[0] == "round":
            print(case.round(), flush=True)
        elif words[0] == "output":
            case.write_output()
            print("ok", flush=True)
        else:
            print("unknown command", words[0], file=sys.stderr, flush=True)
            sys.exit(2)


if __name__ == "__main__":
    main()
