"""The statistics core every analysis shares.

* ``frame``: the narrow, typed, cached analysis table (``y``, ``x0``…, ``g0``…, ``t``).
* ``summary``: the target summarised over any key columns, with Tukey boxes.
* ``shifted``: means held as median + shift, pooled means, Student t intervals.
* ``usage``: the rows each result used and left out.
"""
