"""The inputs: the scenario file's keys, its reader, the rig it builds and what is not exactly known."""
