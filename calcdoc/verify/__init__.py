"""calcdoc: verify stage."""
