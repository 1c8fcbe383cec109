"""Golden values for chance-coincidence.ts: binomial upper tails P(X >= k), X ~ Binomial(n, p), from scipy.

Run: /usr/bin/python3 test/match/golden/binomial_tail.py > test/match/golden/binomial-tail.json
"""
import json
from scipy.stats import binom

CASES = [(10, 3, 0.1), (30, 8, 0.12), (40, 20, 0.25), (60, 5, 0.02), (200, 40, 0.1), (25, 25, 0.5), (50, 1, 0.001)]
print(json.dumps([{"n": n, "k": k, "p": p, "tail": float(binom.sf(k - 1, n, p))} for n, k, p in CASES], indent=1))
