"""Former home of the lot statistics, kept so that ``import lumeval.lot`` and ``from lumeval.lot
import ...`` go on working: the module is :mod:`lumeval.lots.statistics` under this name too."""

import sys

from .lots import statistics as _statistics

sys.modules[__name__] = _statistics
