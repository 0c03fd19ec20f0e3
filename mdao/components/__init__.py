"""Thin OpenMDAO ExplicitComponents, one per discipline, wrapping :mod:`mdao.physics`."""
