"""o2transit's local Panel dashboard: one subpackage per screen (see :mod:`.app`)."""
