"""Lazy re-exports for package ``__init__`` modules (PEP 562), so imports stay fast."""
from __future__ import annotations

import importlib
import sys

__all__ = ["lazy_exports"]


def lazy_exports(package: str, table: dict):
    """Return ``(__getattr__, __dir__)`` for ``package`` resolving ``table`` on first use.

    ``table`` maps a public name to the (absolute or package-relative) module defining it;
    the value is cached in the package namespace after the first access.
    """
    module = sys.modules[package]

    def __getattr__(name):
        target = table.get(name)
        if target is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(target, package), name)
        setattr(module, name, value)
        return value

    def __dir__():
        return sorted(set(vars(module)) | set(table))

    return __getattr__, __dir__
