"""Result files written atomically: nothing is lost or half-written if a run stops midway."""
import json
import os
import tempfile
from pathlib import Path


def write_atomic(path, data):
    """Write ``data`` to ``path`` through a temporary file in the same folder, then rename.

    Parameters
    ----------
    path : str or Path
        Target file; its folder is created if needed.
    data : str, bytes or callable
        Text (UTF-8), bytes, or a function that writes to a binary file handle (e.g. a
        matplotlib ``savefig``).
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            if callable(data):
                data(handle)
            else:
                handle.write(data.encode("utf-8") if isinstance(data, str) else data)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def write_json(path, data):
    """Write JSON atomically; NaN and infinities become null, NumPy values plain numbers."""
    write_atomic(path, json.dumps(_clean(data), indent=2) + "\n")


def _clean(obj):
    if isinstance(obj, float):
        return obj if obj == obj and abs(obj) != float("inf") else None
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if hasattr(obj, "tolist"):
        return _clean(obj.tolist())
    if hasattr(obj, "as_dict"):     # a lift table: {lift_coefficient: [...], value: [...]}
        return _clean(obj.as_dict())
    return obj
