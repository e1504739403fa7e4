"""``python -m ringshift`` runs the command-line interface."""

from ringshift.cli import main

if __name__ == "__main__":  # pragma: no cover
    main()
