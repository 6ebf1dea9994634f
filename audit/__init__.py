"""valve-audit: screen a plant's control valves against IEC 60534, a whole line list at a time."""
__version__ = "0.2.0"
OUTPUT_FORMAT_VERSION = "2"  # bump when the meaning of an output column changes
# 2: noise_dba filled and noise findings in severity and findings (version 1 had no noise rule)
