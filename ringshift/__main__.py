"""``python -m ringshift`` runs the command-line interface (thread pools pinned as for the command)."""

from ringshift._entry import main

if __name__ == "__main__":  # pragma: no cover
    main()
