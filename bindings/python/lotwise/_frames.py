"""pandas, imported only when a table is asked for, so the core works without it."""

from __future__ import annotations

from typing import Any


def pandas() -> Any:
    """The pandas module, or an ImportError that says what needs it."""
    try:
        import pandas as pd
    except ImportError as error:  # pragma: no cover - depends on the environment
        raise ImportError(
            "lotwise's DataFrame tables need pandas: pip install pandas"
        ) from error
    return pd
