from __future__ import annotations

import json
from typing import Any


def write_json(report: dict[str, Any], width: int | None = None) -> str:
    return json.dumps(report, indent=2, ensure_ascii=False) + "\n"
