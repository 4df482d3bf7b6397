"""The case screen (``/``): inputs along the oxygen path, the curves, the numbers, a baseline."""
