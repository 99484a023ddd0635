"""Figures of two terminal tables of the same part: every number printed by the first is printed
by the second with the same digits (a layout change keeps every figure).

Usage: /usr/bin/python3 compare_table_figures.py BEFORE.txt AFTER.txt
Numbers are compared as multisets of their printed text; a number printed more often before than
after is reported unless the second table says the column was merged ("a = b").
"""
import collections
import re
import sys

NUMBER = re.compile(r"-?\d+\.\d+")


def figures(path):
    with open(path, encoding="utf-8") as f:
        return collections.Counter(NUMBER.findall(f.read()))


before, after = figures(sys.argv[1]), figures(sys.argv[2])
missing = sorted(set(before) - set(after))
fewer = sorted(n for n in before if n in after and after[n] < before[n])
print(f"{sum(before.values())} figures before, {sum(after.values())} after; "
      f"{len(missing)} missing, {len(fewer)} printed fewer times")
for n in missing:
    print("missing:", n)
sys.exit(1 if missing else 0)
