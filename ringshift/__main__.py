"""``python -m ringshift`` runs the command-line interface through the command's own entry point
(:func:`ringshift._entry.main`: thread pools pinned and stop signals blocked before anything is imported)."""

from ringshift._entry import main

if __name__ == "__main__":  # pragma: no cover
    main()
