"""Transients: the method of characteristics on the line, from the steady state of a case (issue 14)."""
