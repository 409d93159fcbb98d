"""The physics: oil and air properties, materials, correlations, conductances and the thermal network."""
