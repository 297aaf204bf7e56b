"""Physics: pure functions of numpy arrays (SI units, frequency the first axis): reflection quantities,
line parts (RLGC), de-embedding, calibration maths, the power budget. Reads and writes no files."""
