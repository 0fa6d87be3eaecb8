"""Files that exist only when whole: written under a temporary name, renamed when complete."""

import os
from contextlib import contextmanager
from pathlib import Path


@contextmanager
def atomic_write(path):
    """Yield a temporary path beside ``path``; rename it to ``path`` when the block ends without error.

    The temporary name keeps the file's suffix (``name.partial.png``), so
    writers that choose a format by suffix (matplotlib) still work. On an
    error the temporary file is removed and ``path`` is left as it was: a
    file that exists is complete. Nest several to publish them together.
    """
    path = Path(path)
    partial = path.with_name(f"{path.stem}.partial{path.suffix}")
    try:
        yield partial
        os.replace(partial, path)
    finally:
        if partial.exists():
            partial.unlink()
