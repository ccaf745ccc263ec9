"""Steady solvers: the series line, what is set before it is solved, the inverse questions."""
