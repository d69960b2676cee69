"""Bundled demo parts, installed as package data. Every part here is invented."""
