"""The tail every fixture generator shares: print the fixture with --stdout (the tests' freshness
check), else write it to tests/reference/fixtures/NAME."""

import os
import sys


def emit(text: str, name: str) -> None:
    if "--stdout" in sys.argv:
        sys.stdout.write(text)
        return
    with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "fixtures", name), "w") as f:
        f.write(text)
