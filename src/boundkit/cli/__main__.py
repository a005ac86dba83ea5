"""``python -m boundkit.cli``: the same as the ``boundkit`` command."""
from . import main

main()  # pragma: no cover - exercised in subprocess tests
