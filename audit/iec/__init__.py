"""The published models, one module per domain, pure functions over numpy arrays in SI.

``sizing`` (IEC 60534-2-1: flow coefficient, choked flow, FP, FLP, xTP),
``characteristic`` (inherent characteristic: travel from Cv ratio and back),
``styles`` (typical FL, xT, Fd per valve style), ``acoustics`` (shared pieces
of the noise methods), ``noise_gas`` (IEC 60534-8-3), ``noise_liquid``
(IEC 60534-8-4); ``blocks`` (the array models a block of cases at a time);
``crossing`` (whether a coefficient is provably the sizing's own answer).

May import: only other modules of this package.  Nothing here knows about
tables, files or rules.
"""
