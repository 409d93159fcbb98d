"""Logs: reading a logger's file, fitting the model to it, and the live estimate and forecast."""
