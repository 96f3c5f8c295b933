"""The one engine: every planet x scenario x mode of a question in whole-array passes.

* :mod:`snrkit.engine.engine` -- ``observe`` (once per mode), ``scenario_context``
  (per scenario), ``evaluate`` (modes x scenarios as columns);
* :mod:`snrkit.engine.transit_records` -- statuses, reasons, columns, per-planet
  records and the result Dataset;
* :mod:`snrkit.engine.transits` -- the public ``transits_for_system`` and
  ``contrast_for_system``.
"""

__all__ = []
