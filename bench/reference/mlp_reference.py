"""The reference side of the pace benchmark (bench/pace.ts): a general-purpose library's MLP on the
networks of issue 25, with the engine's protocol: 20 standard-normal inputs, 3 classes (the argmax of
3 fixed random linear scores), 4,096 training rows, Adam at learning rate 0.001, relu, shuffled
batches, no validation and no early stopping. Prints one JSON object: {"library", "version",
"samples": [{"network", "batchSize", "samplesPerSecond", "epochs"}]}. Exits with code 3 and a line on
stderr when the library is not installed (the benchmark then says so instead of printing figures).
Run with one thread for the numeric kernels (the benchmark sets OMP_NUM_THREADS and friends to 1).
"""
import json
import sys
import time
import warnings

try:
    import numpy as np
    import sklearn
    from sklearn.exceptions import ConvergenceWarning
    from sklearn.neural_network import MLPClassifier
except ImportError as error:  # the reference library is optional
    print(f"reference library not installed: {error}", file=sys.stderr)
    sys.exit(3)

NETWORKS = [(1, 16, 32), (2, 64, 32), (3, 128, 32), (3, 128, 256), (4, 256, 256)]
ROWS = 4096
INPUTS = 20
CLASSES = 3
SECONDS = float(sys.argv[1]) if len(sys.argv) > 1 else 2.0


def data():
    rng = np.random.default_rng(1)
    weights = rng.standard_normal((INPUTS, CLASSES))
    x = rng.standard_normal((ROWS, INPUTS)).astype(np.float32)
    return x, np.argmax(x @ weights, axis=1)


def rate(depth, width, batch, x, y):
    """Samples per second of `epochs` epochs, epochs chosen from one timed calibration epoch."""
    def fit(epochs):
        model = MLPClassifier(hidden_layer_sizes=(width,) * depth, activation="relu", solver="adam",
                              learning_rate_init=1e-3, batch_size=batch, max_iter=epochs, shuffle=True,
                              tol=0.0, n_iter_no_change=10**9, early_stopping=False, random_state=7)
        started = time.perf_counter()
        model.fit(x, y)
        return time.perf_counter() - started
    fit(1)  # warm-up
    one = fit(1)
    epochs = max(1, min(50, round(SECONDS / max(one, 1e-6))))
    return ROWS * epochs / fit(epochs), epochs


def main():
    warnings.simplefilter("ignore", ConvergenceWarning)
    x, y = data()
    samples = []
    for depth, width, batch in NETWORKS:
        per_second, epochs = rate(depth, width, batch, x, y)
        samples.append({"network": f"{depth}x{width}", "batchSize": batch, "samplesPerSecond": per_second, "epochs": epochs})
    print(json.dumps({"library": "scikit-learn MLPClassifier", "version": sklearn.__version__, "samples": samples}))


main()
