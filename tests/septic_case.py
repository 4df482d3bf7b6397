"""The invented septic patient the bedside tests share (ours, not a real patient).

Issue 16's case: FiO2 0.6, measured arterial and mixed-venous gas, Hb 8.5 g/dL, 39 degC,
pH 7.25, cardiac output 7 L/min. Tests add or change keys with ``{**SEPTIC_GAS, ...}``.
"""

SEPTIC_GAS = {
    "pao2_mmhg": 82.0,
    "paco2_mmhg": 38.0,
    "ph": 7.25,
    "sao2": 0.93,
    "hb_g_dl": 8.5,
    "fio2": 0.6,
    "temperature_c": 39.0,
    "pvo2_mmhg": 36.0,
    "svo2": 0.60,
    "cardiac_output_l_min": 7.0,
}
