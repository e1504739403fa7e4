"""``python -m ringshift`` runs the command-line interface."""

import sys

try:
    from ringshift.cli import main
except KeyboardInterrupt:  # pragma: no cover - Ctrl-C while the interface is still being imported
    print("ringshift: stopped by Ctrl-C (SIGINT); no partial output was left", file=sys.stderr)
    sys.exit(130)

if __name__ == "__main__":  # pragma: no cover
    main()
