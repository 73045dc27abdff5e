"""A received CDM written back out as it arrived (to forward it, or open it elsewhere)."""

from __future__ import annotations

import os

from ..errors import ScreenerError
from ..store.received import message_text
from .cdm_out import _safe


def write_received(store, message_id: str, folder: str) -> str:
    """Write the message's own text to folder/<MESSAGE_ID>.kvn (or .xml); returns the path.
    ScreenerError (StoreError) when the text is not kept and its file is gone or changed."""
    text, _came_from = message_text(store, message_id)
    ext = ".xml" if text.lstrip().startswith("<") else ".kvn"
    path = os.path.join(folder, _safe(message_id) + ext)
    try:
        os.makedirs(folder, exist_ok=True)
        tmp = path + ".part"
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except OSError as exc:
        raise ScreenerError(f"cannot write {path}: {exc.strerror}") from None
    return path
