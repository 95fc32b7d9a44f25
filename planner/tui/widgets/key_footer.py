"""The bottom line of every night screen: textual's footer of keys, made again only when
the keys it shows change."""

from __future__ import annotations

from textual.widgets import Footer


class KeyFooter(Footer):
    """textual's :class:`~textual.widgets.Footer`, rebuilt once per change of keys.

    textual's footer builds its keys anew (a widget each) every time the screen announces
    its bindings, and a screen coming up announces them three times (focus given, screen
    resumed, after the next refresh) with the same keys: about 8 ms of CPU each before
    the first screen shows.  Here the announcements that find a rebuild already due, or
    the keys as shown, change nothing.  (``bindings_changed`` as textual 8 writes it, with
    that check added.)
    """

    _due = False  # a rebuild is waiting for the next refresh
    _shown: tuple | None = None  # the keys of the last rebuild

    def _keys(self, screen) -> tuple:
        """What the footer shows of ``screen``'s bindings: those shown (and the command
        palette's, when the footer shows it), each with its key as displayed, description,
        action, group, whether enabled, its tooltip."""
        app = self.app
        palette = app.COMMAND_PALETTE_BINDING if self.show_command_palette and app.ENABLE_COMMAND_PALETTE else None
        return tuple((key, b.key, app.get_key_display(b), b.description, b.action, b.group, enabled, tooltip)
                     for key, (_, b, enabled, tooltip) in screen.active_bindings.items() if b.show or key == palette)

    def bindings_changed(self, screen) -> None:
        self._bindings_ready = True
        if not screen.app.app_focus:
            return
        if self.is_attached and screen is self.screen and not self._due and self._keys(screen) != self._shown:
            self._due = True
            self.call_after_refresh(self._rebuild)

    async def _rebuild(self) -> None:
        self._due = False
        if not self.is_attached:
            return
        self._shown = self._keys(self.screen)
        await self.recompose()
