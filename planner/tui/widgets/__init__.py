"""Widgets of the app, each with its own DEFAULT_CSS; the app's look is in app.tcss."""
