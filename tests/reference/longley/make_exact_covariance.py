#!/usr/bin/python3
"""Exact sample covariance (divisor n-1) of the Longley data in rational arithmetic.

Each decimal in longley_nist.csv is read as the exact rational it denotes
(Fraction of the decimal string), so the result is the covariance of the data as
printed, with no rounding at all until the final decimal output (25 significant
digits, well beyond double precision). Run with /usr/bin/python3 from this folder:
    /usr/bin/python3 make_exact_covariance.py > longley_exact_covariance.csv
"""
import csv
import decimal
import os
from fractions import Fraction

here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "longley_nist.csv"), newline="") as f:
    reader = csv.reader(f)
    header = next(reader)
    rows = [[Fraction(v) for v in r] for r in reader if r]

n, p = len(rows), len(header)
mean = [sum(r[j] for r in rows) / n for j in range(p)]
cov = [[sum((r[i] - mean[i]) * (r[j] - mean[j]) for r in rows) / (n - 1) for j in range(p)]
       for i in range(p)]

decimal.getcontext().prec = 40


def fmt(q):
    d = decimal.Decimal(q.numerator) / decimal.Decimal(q.denominator)
    return format(d, ".24e")


print(",".join(header))
for i in range(p):
    print(",".join(fmt(cov[i][j]) for j in range(p)))
