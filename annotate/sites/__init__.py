"""Where ionizable sites are found: group rules (data) and their matching."""
