"""Where protonation microstates are weighed and species structures are built."""
