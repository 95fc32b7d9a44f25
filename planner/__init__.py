"""gcplan: observation planning for photometric campaigns on Galactic globular clusters.

The import package is ``planner``; the command is ``gcplan``.  Importing this
package does no work: configuration (astropy's IERS policy) happens in
:func:`planner.config.configure_runtime`, called by the entry points.
"""

__version__ = "0.1.0"
