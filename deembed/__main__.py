"""``python -m deembed`` and the ``deembed`` console script."""
import sys


def run() -> None:
    from .cli.app import main

    sys.exit(main())


if __name__ == "__main__":
    run()
