"""The planning answers: pulls, waits, cooler and oil, the band, the sweep, the hot day, the verdict."""
