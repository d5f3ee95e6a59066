"""Stage 2, mechanics: element matrices (elastic, geometric, end-moment terms) for all elements at
once, their assembly, and the member geometry the stiffness needs (physical members, lengths
between torsional restraints)."""
