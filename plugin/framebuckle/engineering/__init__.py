"""Stage 6, engineering: from a solved Result to members, participation, effective lengths,
sensitivities, the global sway mode, storey drift, code verdicts, the imperfection and the
``check`` stage's report (with the solve's own matrices)."""
