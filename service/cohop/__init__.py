"""cohop: interference-aware channel planning for co-located FHSS networks.

Importing this package has no side effects and needs only the standard
library; the service's modules import numpy, flask and friends themselves.
"""

__version__ = "0.1.0"
