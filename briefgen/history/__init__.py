"""What a brief was built from, and what changed since the last one.

``record`` writes the run's record into stats.json (the data file's SHA-256, its
columns and types, the config as used, the versions); ``previous`` finds and reads
the last run's stats.json; ``change`` compares the key numbers then and now.
"""
