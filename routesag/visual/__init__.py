"""Results people can look at: span profiles, a paged plan overview and a self-contained HTML report.

Everything here reads only a finished GeoPackage (and, for the ground line and the crossing categories, the
terrain, surface and crossings files named in its run_info when they are still there, unchanged).
``routesag report`` calls :func:`routesag.visual.build.build_report`.
"""
