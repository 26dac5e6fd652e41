"""Bundled data libraries (materials, motors, fasteners, machines) and starter designs."""
