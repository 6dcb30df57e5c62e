"""Physics models: atmosphere, drag coefficient, gravity and the equations of motion."""
