"""Results people can look at (work in progress, not yet wired into the CLI): span profiles and a plan overview.

Everything here reads only a finished GeoPackage (and, for the ground line, the terrain
raster named in its run_info when it is still there).
"""
