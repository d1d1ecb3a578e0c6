"""The patient: body size, renal function and patient-level checks."""
