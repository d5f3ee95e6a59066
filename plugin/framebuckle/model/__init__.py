"""Stage 1, the model: validated read-only arrays (Frame, LoadCase), end releases, the
sub-division into analysis elements and plausibility warnings.  No element matrices, no files."""
