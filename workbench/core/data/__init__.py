"""Reading process data: a file becomes a :class:`~workbench.core.model.Dataset`.

Owns everything between the bytes on disk and the subgroups × streams array: sniffing the dialect and
encoding, converting cells, detecting the layout, and the file:row:column errors for bad input.

Modules (import them directly; this package imports nothing on its own, so loading stays cheap):

* ``reader`` — ``load(path, request)``: the four layouts (long, wide, individuals, summary) and counts.
* ``sniff``  — ``read_table``: a CSV/TSV/XLSX file as a table of cells, its fingerprint and row count.
* ``cells``  — conversions of one column (numbers, times, text) with the cell that failed named.
"""

__all__ = ["reader", "sniff", "cells"]
