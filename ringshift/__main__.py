"""``python -m ringshift`` runs the command-line interface through the command's own entry point
(:func:`ringshift._entry.main`: thread pools pinned and stop signals blocked before anything is imported)."""

if __name__ == "__main__":  # pragma: no cover
    try:
        from ringshift._entry import main
    except KeyboardInterrupt:   # Ctrl-C while the entry point loads: one line, exit 130, no traceback
        import sys

        print("ringshift: stopped by Ctrl-C (SIGINT); no partial output was left", file=sys.stderr)
        raise SystemExit(130) from None
    main()
