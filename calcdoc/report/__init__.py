"""calcdoc: report stage."""
