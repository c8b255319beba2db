"""The reference: read a CSV with pyarrow alone (default threads), nothing else."""

import sys

import pyarrow.csv as pacsv

table = pacsv.read_csv(sys.argv[1])
print(table.num_rows)
