"""``python -m extremes``: the same program as the ``extremes`` console script."""
from extremes.cli import main

if __name__ == "__main__":  # pragma: no cover - exercised through subprocess tests
    main()
