"""The observing log: the SQLite store and FITS header ingest.

A storage shell: it may import the core and the inputs (the catalog, for names),
never the commands, reports or the app.
"""
