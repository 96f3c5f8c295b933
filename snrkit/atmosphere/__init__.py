"""Atmospheres: composition, opacities, spectra and scenario presets."""

__all__ = []
