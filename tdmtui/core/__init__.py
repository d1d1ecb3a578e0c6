"""Pure computation core: no textual, no rich, no printing.

Everything here works on plain floats in canonical units
(mg, L, h, mg/L, mL/min, kg, cm, yr; serum creatinine in mg/dL).
"""
