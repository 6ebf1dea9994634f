"""valve-audit: screen a plant's control valves against IEC 60534, a whole line list at a time."""
__version__ = "0.3.0"
OUTPUT_FORMAT_VERSION = "3"  # bump when the meaning of an output column changes
# 2: noise_dba filled and noise findings in severity and findings (version 1 had no noise rule)
# 3: rank by severity, criticality and capacity margin (was: choke ratio); severities graded by the
#    severity table with intent and duty; one sentence per finding family, quoting the worst case;
#    gas k is the isentropic exponent rho c^2 / p (was cp/cv); velocity_out_m_s limited to the outlet's
#    speed of sound, mach_out for flashing liquids too; standard volumes at real-gas density
