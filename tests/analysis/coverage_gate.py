#!/usr/bin/env python3
"""coverage_gate.py SUMMARY.json LINES BRANCHES - the firmware coverage gate.

Reads gcovr's --json-summary of firmware/ and prints one line with the line
and branch coverage; exits 1 when either is below its threshold (percent),
naming the files with the most uncovered lines.
"""
import json
import sys


def main():
    path, lines_min, branches_min = sys.argv[1], float(sys.argv[2]), float(sys.argv[3])
    s = json.load(open(path))
    lc, lt = s["line_covered"], s["line_total"]
    bc, bt = s["branch_covered"], s["branch_total"]
    lp = 100.0 * lc / lt if lt else 0.0
    bp = 100.0 * bc / bt if bt else 0.0
    print("coverage firmware/: lines %.1f %% (%d of %d), branches %.1f %% (%d of %d); thresholds %g %% and %g %%"
          % (lp, lc, lt, bp, bc, bt, lines_min, branches_min))
    if lt == 0:
        print("coverage FAILED: no firmware line was measured")
        return 1
    if lp < lines_min or bp < branches_min:
        worst = sorted(s["files"], key=lambda f: f["line_covered"] - f["line_total"])[:8]
        print("coverage FAILED: below the threshold; most uncovered lines in: " +
              ", ".join("%s (%d)" % (f["filename"], f["line_total"] - f["line_covered"]) for f in worst))
        return 1
    print("coverage: thresholds met")
    return 0


if __name__ == "__main__":
    sys.exit(main())
