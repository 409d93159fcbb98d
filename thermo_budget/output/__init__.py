"""Words and figures for the command line and the page (no physics here)."""
