"""calcdoc: record stage."""
