"""Physical constants (a leaf module: no firnray imports)."""

#: Speed of light in vacuum [m/ns]; exact by the SI definition of the metre.
SPEED_OF_LIGHT = 0.299792458
