"""The measured-gas tab of the case screen: a patient's gases, the fit, what-ifs, saved cases."""
