"""``python -m featuresift``: the command-line tool (see :mod:`featuresift.cli`)."""

from featuresift.cli import main

if __name__ == "__main__":
    raise SystemExit(main())
