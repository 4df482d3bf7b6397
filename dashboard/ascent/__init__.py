"""The ascent planner (``/ascent``): day-by-day schedules compared by the oxygen they leave."""
