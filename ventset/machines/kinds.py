"""The words machines.toml may use: how a breath is set, the controls, their units. No imports (read by
ventset.datafiles while the library loads).

A breath kind names the control that sets the size of the breath (``VOLUME_CONTROL``) and the controls it
needs; anything else a class lists must be one of the optional controls.
"""

from __future__ import annotations

# Control kind → (the units it may be shown in, what it is). Names are ventset's own.
CONTROLS: dict[str, tuple[tuple[str, ...], str]] = {
    "tidal_volume": (("mL", "L"), "volume the machine pushes per breath (bellows travel, piston stroke)"),
    "rate": (("/min",), "breaths per minute"),
    "ti": (("s",), "inspiratory time"),
    "te": (("s",), "expiratory time"),
    "ie": (("1:E",), "the E of I:E = 1:E"),
    "flow": (("L/min",), "constant inspiratory flow"),
    "pressure": (("cmH2O",), "pressure held above PEEP during inspiration"),
    "cycle_pressure": (("cmH2O",), "airway pressure at which inspiration ends"),
    "squeeze_pressure": (("cmH2O",), "manometer reading to squeeze the bag to"),
    "press_time": (("s",), "how long the valve is held open"),
    "peep": (("cmH2O",), "end-expiratory pressure"),
    "pressure_limit": (("cmH2O",), "pressure at which the machine stops or vents the breath"),
}

# Breath kind → (groups of controls of which exactly one member is required, the control that sizes the breath).
BREATHS: dict[str, tuple[tuple[tuple[str, ...], ...], str]] = {
    "volume": ((("tidal_volume",), ("rate", "te"), ("ti", "ie")), "tidal_volume"),
    "volume_flow": ((("tidal_volume",), ("flow",), ("rate", "te")), "tidal_volume"),
    "flow_time": ((("flow",), ("ti",), ("rate", "te")), "flow"),
    "pressure": ((("pressure",), ("rate", "te"), ("ti", "ie")), "pressure"),
    "pressure_cycled": ((("flow",), ("cycle_pressure",), ("te",)), "cycle_pressure"),
    "manual": ((("squeeze_pressure",), ("ti",), ("rate",)), "squeeze_pressure"),
    "demand": ((("press_time",), ("rate",)), "press_time"),
}
OPTIONAL_CONTROLS = ("peep", "pressure_limit")
BREATH_HELP = {
    "volume": "a set volume per breath, at a set rate and inspiratory time (or I:E)",
    "volume_flow": "a set volume delivered at a set flow; the inspiratory time follows (volume ÷ flow)",
    "flow_time": "a set flow for a set inspiratory time; the volume follows (flow × time)",
    "pressure": "a set pressure above PEEP for a set inspiratory time; the volume follows the lung",
    "pressure_cycled": "a set flow until the airway reaches a set pressure, then a set expiratory time",
    "manual": "a bag squeezed by hand to a manometer reading over a counted time",
    "demand": "a valve held open for a counted time; the volume is the valve's flow × that time",
}
DRIVES = ("gas", "electric", "hand")
PEEP_WITHOUT_CONTROL = ("add_on_valve", "none")
