"""The bundled demo scenario (invented site, readings, logs and photos)."""
