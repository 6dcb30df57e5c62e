"""Stage-mass splits: the rocket-equation optimum and the split chosen with the trajectory."""
