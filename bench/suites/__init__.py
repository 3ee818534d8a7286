"""One module per benchmark; each ``run(quick) -> list[Figure]``."""
