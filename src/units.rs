//! Quantities with units: parsing "750 kV", "3 bar", "20 degC" into SI, and formatting.
