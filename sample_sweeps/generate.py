"""Regenerate the sample sweeps of the invented "Ridgeback Hill" station (see deembed/jobs/samples.py).

    python sample_sweeps/generate.py         # writes into this folder
"""
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from deembed.jobs.sample_history import write_history  # noqa: E402
from deembed.jobs.samples import write_samples  # noqa: E402

if __name__ == "__main__":
    here = os.path.dirname(os.path.abspath(__file__))
    for path in write_samples(here) + write_history(os.path.join(here, "history")):
        print(path)
