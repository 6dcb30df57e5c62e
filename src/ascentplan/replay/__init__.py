"""Forward integration of a schedule and its verification against the optimiser."""
