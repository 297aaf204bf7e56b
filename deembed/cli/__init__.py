"""The command line (typer): parse options, call one job, print; errors become one line and an exit status."""
