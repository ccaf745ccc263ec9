"""What is said about a solution: the checks by topic, the range of the answer, the cases read together, energy."""
