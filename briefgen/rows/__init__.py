"""Which rows a brief covers: the ``where`` filter and the ``window`` relative to the run date.

``where.py`` parses the small filter language into a tree (no ``eval``), ``compile.py``
turns the tree into an Ibis expression on the data's columns, ``window.py`` reads
``last: 7 days`` against the build date, and ``scope.py`` applies both to a table and
says in words which rows the brief covers.
"""
