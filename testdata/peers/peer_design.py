#!/usr/bin/env python3
"""Write a saddlecheck design file for the peer benchmark workload.

Usage: python3 peer_design.py WORKDIR > WORKDIR/design.yaml

WORKDIR is the folder written by ../shared/peers/make_workloads.py. Its
design.json gives the saddle z = x²/a² − y²/b² in a local frame with
p = R·q + t; saddlecheck's principal form is z = k1·x² + k2·y² with
k1 = 1/a², k2 = −1/b², local axes = the columns of R, origin = t. The
corners bound the patch in plan. The tolerance block is for benchmarking
only (it states no real requirement).
"""
import json
import sys

d = json.load(open(sys.argv[1] + "/design.json"))
R, t = d["R"], d["t"]
axes = [[R[0][i], R[1][i], R[2][i]] for i in range(3)]
fmt = lambda v: "[" + ", ".join(repr(float(x)) for x in v) + "]"
print("structure: peer benchmark workload (synthetic saddle, not a structure)")
print("units: m")
print("normal: up")
print("patches:")
print("  - id: W")
print("    saddle: {k1: %r, k2: %r, origin: %s, axes: [%s]}" % (
    1 / d["a"] ** 2, -1 / d["b"] ** 2, fmt(t), ", ".join(fmt(a) for a in axes)))
print("    corners: [%s]" % ", ".join(fmt(c) for c in d["corners"]))
print("tolerance:")
print('  source: "benchmark only: no real requirement"')
print("  limit_mm: 10")
print("  min_share: 0.95")
print("  max_abs_mm: 25")
print("  bands_mm: [5, 10, 20]")
