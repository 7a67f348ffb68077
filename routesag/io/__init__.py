"""Thin I/O edges: windowed terrain sampling, atomic GeoPackage output, file hashes."""

from routesag.io.gpkg import read_layer, write_layers
from routesag.io.hashing import sha256_file
from routesag.io.terrain import Z_UNIT_FACTORS, TerrainSampler

__all__ = ["TerrainSampler", "Z_UNIT_FACTORS", "read_layer", "sha256_file", "write_layers"]
