"""Python's cyclic garbage collector while the app starts.

Start-up makes several hundred thousand objects that live as long as the app (the
modules' classes, textual's stylesheet and widgets, the campaign): the collector's
passes over them — a full one among them — cost about 25 ms of CPU before the first
night is on screen, 40 ms with the imports (measured with ``gc.callbacks``).  So the
collector waits (:func:`pause`: ``gcplan app`` before it imports the app, which makes
most of those objects, and the app itself when it loads) until the first night shows;
then what exists is frozen, so later passes skip it, and collection resumes
(:func:`resume`).  When the app ends, the frozen objects are handed back to the
collector (:func:`release`), so a process that runs the app more than once (the
tests) frees them.
"""

from __future__ import annotations

import gc


def pause() -> None:
    """No collections until :func:`resume`."""
    gc.disable()


def resume() -> None:
    """Freeze what exists and collect again (once: nothing happens if collecting already)."""
    if not gc.isenabled():
        gc.freeze()
        gc.enable()


def release() -> None:
    """Collect again, the frozen objects included."""
    gc.unfreeze()
    gc.enable()
