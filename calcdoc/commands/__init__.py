"""One module per command: load, solve, verify, render; a few lines each."""
