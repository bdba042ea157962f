"""Helpers shared by the command-line subcommands: loading functions, parameters, output."""

from __future__ import annotations

import importlib.util
import math
import os
from collections.abc import Callable, Sequence
from typing import Any

from ..errors import InputFileError, ParameterError

__all__ = ["function_arg", "load_file_function", "parse_params"]

# -- loading functions -----------------------------------------------------------
def load_file_function(spec: str) -> Callable[..., Any]:
    """Load ``path.py:function`` from the user's own file."""
    path, sep, name = spec.rpartition(":")
    if not sep or not path or not name:
        raise InputFileError(f"--file needs PATH.py:FUNCTION, for example model.py:residual. Got {spec!r}.")
    if not os.path.isfile(path):
        raise InputFileError(f"No such file: {path!r} (from --file {spec!r}).")
    mod_name = "convdiag_user_" + os.path.splitext(os.path.basename(path))[0].replace("-", "_")
    module_spec = importlib.util.spec_from_file_location(mod_name, path)
    if module_spec is None or module_spec.loader is None:
        raise InputFileError(f"Could not load {path!r} as a Python module.")
    module = importlib.util.module_from_spec(module_spec)
    try:
        module_spec.loader.exec_module(module)
    except Exception as exc:
        raise InputFileError(f"Importing {path!r} failed: {type(exc).__name__}: {exc}") from exc
    fn = getattr(module, name, None)
    if fn is None or not callable(fn):
        names = sorted(n for n, v in vars(module).items() if callable(v) and not n.startswith("_"))
        raise InputFileError(f"{path!r} has no function {name!r}; it defines {', '.join(names) or 'none'}.")
    return fn  # type: ignore[no-any-return]


def function_arg(text: str, *, allow_file: bool = False) -> Any:
    """EXPR text, handed to the safe expression parser: text never imports a file or runs code.

    Text shaped like ``PATH.py:FUNCTION`` is refused with a pointer to ``--file``, the option that opts in to
    importing the user's own Python file (text may come from a shared file; it must never run code). With
    ``allow_file`` (the command was given ``--file``), a derivative may name a function in a file too.
    """
    text = text.strip()  # main() guards text starting with '-' from argparse with a leading space
    head, sep, _ = text.rpartition(":")
    if sep and head.endswith(".py"):
        if allow_file:
            return load_file_function(text)
        raise InputFileError(
            f"{text!r} looks like PATH.py:FUNCTION, but expression text is never imported or run. Pass your own "
            f"function with --file {text} (then --fprime may name a function in a file too); otherwise give "
            "expressions such as '3*x**2 - 2'."
        )
    return text


def parse_params(items: Sequence[str] | None) -> dict[str, float]:
    out: dict[str, float] = {}
    for item in items or ():
        name, sep, value = item.partition("=")
        name = name.strip()
        if not sep or not name.isidentifier():
            raise ParameterError(f"--param needs NAME=VALUE, for example --param Re=1e5. Got {item!r}.")
        try:
            out[name] = float(value)
        except ValueError:
            raise ParameterError(f"--param {name} needs a number after '='. Got {value!r}.") from None
        if not math.isfinite(out[name]):
            raise ParameterError(f"--param {name} must be finite. Got {value!r}.")
    return out
