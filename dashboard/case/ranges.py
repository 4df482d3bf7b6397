"""Reference ranges for the numbers the dashboard reports.

Adult, at rest, breathing air at sea level. These are common practice, not taken from one
source; they frame a number, they do not judge a patient. Values are in the model's
canonical units (mmHg, fraction, mL O2/dL, mL/min, mL O2/L).
"""

from __future__ import annotations

# name -> (low, high) in canonical units; None where no single range makes sense.
# common practice (adult, rest, air, sea level), no single source.
NORMAL_RANGES: dict[str, tuple[float, float] | None] = {
    "inspired_po2": None,
    "alveolar_po2": (90.0, 110.0),
    "end_capillary_po2": None,
    "arterial_po2": (80.0, 100.0),
    "arterial_so2": (0.95, 1.00),
    "arterial_o2_content": (16.0, 22.0),
    "venous_po2": (35.0, 45.0),
    "venous_so2": (0.65, 0.80),
    "venous_o2_content": (12.0, 17.0),
    "do2": (850.0, 1200.0),
    "do2i": (500.0, 650.0),
    "vo2": (200.0, 300.0),
    "extraction_ratio": (0.20, 0.30),
    "o2_extracted_per_l": (40.0, 60.0),
    "arterial_p50": (24.0, 29.0),
    "venous_p50": (24.5, 30.0),
}
