"""One module per analysis: its results ─► the findings a reader sees."""
