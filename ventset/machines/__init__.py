"""Ventilator classes: the planner's ideal settings turned into the controls of a machine class.

Kept free of imports on purpose: ``ventset.datafiles`` reads ``ventset.machines.kinds`` while the library is
still loading. Use the submodules: ``data`` (the classes in resources/machines.toml), ``dial`` (ideal → the
settings a machine can be dialled to, re-evaluated as dialled), ``supply`` (oxygen use and how long a
cylinder lasts), ``cautions`` (what is said when the machine cannot do what the plan asks), ``stage`` (the
plan stage that attaches it all to a Plan).
"""
