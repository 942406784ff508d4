"""calcdoc: model stage."""
