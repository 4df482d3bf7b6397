"""Lecture mode (``/lecture``): a projector view, lessons stepped with a clicker, one factor at a time."""
