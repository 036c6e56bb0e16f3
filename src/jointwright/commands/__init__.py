"""One module per CLI verb; each defines ``command`` (a click command)."""
