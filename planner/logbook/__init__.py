"""The observing log: the SQLite store and FITS header ingest; the campaign nights' cache on disk.

A storage shell: it may import the core and the inputs (the catalog, for names),
never the commands, reports or the app.
"""
