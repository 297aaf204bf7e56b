"""Analysis: what the numbers mean: findings (resonance, SWR spans, Q, trimming), summaries, the line
characterization fits, comparisons and their limits. Pure functions of arrays and small objects."""
