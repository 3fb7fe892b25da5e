"""Pearson and Spearman correlations of paired samples, computed by SciPy
(PyPI `scipy`, scipy.stats.pearsonr and scipy.stats.spearmanr), printed as
JSON.

Usage: pearson.py PAIRS.json

PAIRS.json holds {"pairs": [[[x0, x1, ...], [y0, y1, ...]], ...]}: a list of
(x, y) samples. Nudgebar's tests compare its own coefficients for the corpus
attributes with these, so the check rests on a library that shares no code
with Nudgebar.
"""
import json
import sys
from importlib.metadata import version

from scipy import stats


def main():
    with open(sys.argv[1]) as f:
        pairs = json.load(f)["pairs"]
    pearson = []
    spearman = []
    for x, y in pairs:
        pearson.append(float(stats.pearsonr(x, y).statistic))
        spearman.append(float(stats.spearmanr(x, y).statistic))
    print(json.dumps({"scipy": version("scipy"), "pearson": pearson, "spearman": spearman}))


if __name__ == "__main__":
    main()
