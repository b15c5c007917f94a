"""Allow `python -m registry` as a synonym for the `lockkeeper` command."""

from registry.cli import main

if __name__ == "__main__":
    main()
