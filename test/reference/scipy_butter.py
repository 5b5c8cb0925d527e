"""Print SciPy's Butterworth designs as JSON, for the reference tests.

stdin:  JSON list of [order, cutoff_hz, sample_rate_hz]
stdout: JSON {"scipy": version, "designs": [{"sos": [[6 values] ...], "b": [...], "a": [...]}]}
Run with Debian's interpreter (/usr/bin/python3, package python3-scipy).
"""
import json
import sys

import scipy
from scipy.signal import butter


def main() -> None:
    cases = json.load(sys.stdin)
    designs = []
    for order, cutoff, fs in cases:
        sos = butter(int(order), float(cutoff), btype="low", fs=float(fs), output="sos")
        b, a = butter(int(order), float(cutoff), btype="low", fs=float(fs), output="ba")
        designs.append({"sos": sos.tolist(), "b": b.tolist(), "a": a.tolist()})
    json.dump({"scipy": scipy.__version__, "designs": designs}, sys.stdout)


if __name__ == "__main__":
    main()
