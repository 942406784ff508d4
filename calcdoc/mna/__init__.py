"""calcdoc: mna stage."""
