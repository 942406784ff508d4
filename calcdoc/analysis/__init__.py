"""Analysis stages on top of the case solutions: derating, tolerance, sensitivity, sweeps."""
