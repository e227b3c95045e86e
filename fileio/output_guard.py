"""An output never replaces an input: a report written onto the estimate it was made from
would destroy the user's work with no way back, so that is refused before anything is made."""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path


class OutputIsInput(ValueError):
    """The chosen output is one of the files the user's work lives in."""


def same_file(a: str | Path, b: str | Path) -> bool:
    """True when both names reach one file (links, `..` and case-folding file systems too)."""
    try:
        return os.path.samefile(a, b)
    except OSError:  # one of them does not exist (yet): compare the resolved names
        return os.path.realpath(a) == os.path.realpath(b)


def refuse_overwriting_inputs(output: str | Path, inputs: Iterable[str | Path | None]) -> None:
    """Raise `OutputIsInput` when `output` is any of `inputs`, with the fix in the message."""
    output = Path(output)
    for given in inputs:
        if given is None or str(given) == "":
            continue
        if same_file(output, given):
            other = output.with_name(f"{output.stem} contingency{output.suffix}")
            raise OutputIsInput(
                f"{output} is the estimate being read; writing the report there would replace "
                f"it. Fix: choose another output name, e.g. {other.name}."
            )
