"""``python -m clashcheck`` runs the command line."""

from .cli import main

if __name__ == "__main__":  # pragma: no cover
    main()
