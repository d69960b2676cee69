"""The bundled demo plan, as package data. Every part and number in it is invented."""
