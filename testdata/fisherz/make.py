#!/usr/bin/python3
"""Fisher z reference values for data/preprocess_test.go.

Run with Debian's Python (numpy 1.24):  /usr/bin/python3 make.py > fisherz.tsv
Each line: r, then numpy.arctanh(r) printed with 17 significant digits.
"""
import numpy as np

rs = [-0.99, -0.9, -0.5, -0.25, -0.1, 0.0, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5,
      0.6, 0.7, 0.8, 0.9, 0.95, 0.99, 0.999]
print("r\tz")
for r in rs:
    print(f"{r!r}\t{np.arctanh(np.float64(r)):.17g}")
