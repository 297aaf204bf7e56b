"""Jobs: one function per command: read the inputs, compute, render, write every output."""
