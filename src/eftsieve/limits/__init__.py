"""Published limits against positivity: interval cards and HEPData records.

:mod:`eftsieve.limits.line` and :mod:`eftsieve.limits.plane` cut a line or a plane by a
region exactly; :mod:`~eftsieve.limits.intervals`, :mod:`~eftsieve.limits.scans` and
:mod:`~eftsieve.limits.contours` turn published intervals, likelihood scans and contours
into what positivity leaves of them; :mod:`~eftsieve.limits.run` runs a whole card or
record (``eftsieve limits``).
"""

from eftsieve.limits.run import LimitsResult, limits_from_card, limits_from_record

__all__ = ["LimitsResult", "limits_from_card", "limits_from_record"]
