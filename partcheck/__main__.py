"""``python -m partcheck`` runs the command line."""

from partcheck.cli import main

if __name__ == "__main__":
    main()
