"""o2transit: oxygen from inspired air to the tissues, a validated model and a local dashboard.

``o2transit.model`` is the physiology (pure numpy, one module per stage of the oxygen path);
``o2transit.dashboard`` is the Panel app that drives it (one subpackage per screen);
``o2transit.scenarios`` holds the invented example files; ``o2transit.cli`` is the command.
"""

__version__ = "0.2.0"
