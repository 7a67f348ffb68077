"""Windowed sampling of a single-band terrain raster (DTM/DSM from LiDAR).

The raster is opened once; every read is a ``window=`` read of the smallest
block that covers the points asked for, so a country-wide DTM costs no more
memory than the few hundred cells under one span.
"""

import contextlib
import math
import sys
import threading
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from xml.etree import ElementTree

import affine
import numpy as np
import pyproj
import rasterio
from rasterio.enums import MaskFlags
import rasterio.errors
from rasterio.windows import Window

from routesag.errors import DataError

#: Metres per vertical unit accepted for ``z_units``.
Z_UNIT_FACTORS = {
    "m": 1.0,
    "ft": 0.3048,           # international foot (1959)
    "ftUS": 1200.0 / 3937.0,  # US survey foot
}

#: Elevations outside this range are taken for fill values (voids written as -9999, -32768, -3.4e38 ... with no
#: nodata tag) and read as nodata [m]. The lowest dry land is about -430 m and the highest summit about 8850 m
#: (common practice: the usual plausibility bounds of a terrain model).
PLAUSIBLE_Z_M = (-500.0, 9000.0)
#: Distinct implausible values remembered per raster for the warning.
_SUSPECT_VALUES_KEPT = 8


class TerrainSampler:
    """Elevations from a single-band raster by bilinear interpolation.

    Use as a context manager (``with TerrainSampler(path) as terrain:``) or
    call :meth:`close`.

    Parameters
    ----------
    path : str or os.PathLike
        Single-band raster readable by GDAL (GeoTIFF, VRT, ...) with a CRS.
    z_units : {"m", "ft", "ftUS"}
        Unit of the stored elevations when the raster CRS does not say:
        metre, international foot (0.3048 m) or US survey foot (1200/3937 m).
        A vertical axis in feet declared by the raster CRS (compound CRS)
        takes precedence, so a factor is never applied twice; what was
        applied is in :attr:`z_unit_note`.
    crs : str, optional
        CRS for a raster that has none ([inputs] terrain_crs).
    nodata : float, optional
        A stored value that means "no data" although the raster does not tag
        it ([inputs] terrain_nodata). Whatever is declared, stored values
        that convert to elevations outside :data:`PLAUSIBLE_Z_M` are read as
        nodata too and listed in :attr:`implausible_values`.

    Attributes
    ----------
    z_factor : float
        Metres per stored vertical unit, applied to every sample [m/unit].
    z_unit_note : str
        Sentence for the run report saying which vertical factor was applied
        and why.
    sample_window_count : int
        Number of window reads made so far (proves reads are windowed).
    last_window : rasterio.windows.Window or None
        The window of the most recent read.
    max_window_cells : int
        Largest window read in one go; point sets spread wider are sampled
        tile by tile so memory stays bounded [cells].

    Raises
    ------
    DataError
        The file cannot be opened, has no CRS or more than one band, or
        ``z_units`` is unknown.

    Notes
    -----
    Samples use bilinear interpolation between the four nearest pixel
    centres. A sample is NaN when any of those four cells is nodata, masked
    or NaN, or when the point lies outside the raster. Points inside the
    raster but within half a pixel of its edge, i.e. beyond the outermost
    pixel centres, are clamped onto those centres (constant extrapolation of
    the edge value across the outer half pixel).

    References
    ----------
    .. [1] W.H. Press, S.A. Teukolsky, W.T. Vetterling, B.P. Flannery,
       "Numerical Recipes", 3rd ed., Cambridge University Press, 2007,
       sec. 3.6 "Interpolation on a grid in multidimensions" (bilinear).
    .. [2] OGC GeoTIFF Standard 1.1 (19-008r4), sec. 7.4 raster space and
       PixelIsArea: pixel (row, col) covers [col, col+1) x [row, row+1), its
       centre is at (col + 0.5, row + 0.5).
    """

    max_window_cells = 4096 * 4096
    # Points are "sparse" when their box holds far more cells than they need:
    # then each small tile of points gets its own read.
    sparse_min_cells = 512 * 512
    sparse_cells_per_point = 256
    sparse_tile = 64
    cache_mb = 64
    #: Cells added on each side of a window read for interpolation when windows are held (see ``hold_windows``),
    #: within the raster blocks the window touches (growing into more blocks would decode them for nothing).
    hold_margin_cells = 48
    #: Largest window that is held [cells]; larger reads are not kept.
    hold_max_cells = 512 * 1024

    def __init__(self, path, z_units="m", crs=None, nodata=None, hold_windows=0):
        self._path = Path(path)
        # The last few windows read for interpolation, grown by a margin, newest first: the wires and load
        # cases of one span, and the terrain stage after them, then decode the span's cells once.
        self.hold_windows = int(hold_windows)
        self._held: list[tuple[Window, np.ndarray]] = []
        self.crs_note = ""
        self._z_units = z_units
        self._assigned_crs = crs
        self._declared_nodata = None if nodata is None else float(nodata)
        #: Implausible stored values met so far (read as nodata) -> number of cells.
        self.implausible_values: dict[float, int] = {}
        if z_units not in Z_UNIT_FACTORS:
            raise DataError(f"terrain {self._path}: z_units {z_units!r} is not one of "
                            f"{', '.join(Z_UNIT_FACTORS)}")
        # A bounded block cache for the sampler's life: GDAL's default (5 % of RAM)
        # would keep every block a long line touches, so memory would grow with the raster.
        # rasterio hands an integer GDAL_CACHEMAX to GDALSetCacheMax64, which counts bytes: pass bytes.
        self._env = rasterio.Env(GDAL_CACHEMAX=int(self.cache_mb) * 1024 * 1024)
        self._env.__enter__()
        try:
            self._ds = _open_single_band(self._path, assigned_crs=crs)
        except BaseException:
            self._env.__exit__(None, None, None)
            raise
        try:
            self._crs, self.crs_note = _parse_crs(self._path, self._ds, crs)
            self._horizontal_crs = _horizontal_part(self._crs)
            scale, offset = self._ds.scales[0], self._ds.offsets[0]
            self._scale = 1.0 if scale is None else float(scale)
            self._offset = 0.0 if offset is None else float(offset)
            self.z_factor, self.z_unit_note = _resolve_z_factor(
                z_units, _declared_vertical_unit(self._crs))
            if (self._scale, self._offset) != (1.0, 0.0):
                self.z_unit_note += (f"; band scale {self._scale:g} and offset "
                                     f"{self._offset:g} applied first")
        except BaseException:
            self.close()
            raise
        self._transformers = {}
        self._seen_crs = {}
        flags = set(self._ds.mask_flag_enums[0])
        self._mask_from_nodata = flags <= {MaskFlags.nodata, MaskFlags.all_valid}
        try:
            self._inverse = ~self._ds.transform
        except affine.AffineError as exc:  # a corrupt geotransform (zero pixel size)
            message = (f"terrain {self._path}: its geotransform {tuple(self._ds.transform)[:6]} cannot be "
                       f"inverted (zero pixel size?); the file may be corrupt ({_first_line(exc)})")
            self.close()
            raise DataError(message) from None
        self.sample_window_count = 0
        self.last_window = None

    # -- lifecycle -----------------------------------------------------------------
    def reference(self) -> "RasterRef":
        """What another process needs to open this raster itself (an open handle cannot be pickled)."""
        return RasterRef(str(self._path), self._z_units, self._assigned_crs, self._declared_nodata,
                         self.hold_windows)

    def __reduce__(self):
        raise TypeError("a TerrainSampler holds an open raster and cannot be pickled; send .reference()")

    def __enter__(self):
        return self

    def __exit__(self, *exc_info):
        self.close()

    def close(self):
        """Close the raster; safe to call twice."""
        self._ds.close()
        if self._env is not None:
            env, self._env = self._env, None
            try:
                env.__exit__(None, None, None)
            except rasterio.errors.EnvError:
                # rasterio's environments nest: a sampler opened first and closed first removes the
                # environment the later one entered; this one's settings went with it, nothing is left to undo
                pass

    def __repr__(self):
        return (f"TerrainSampler({str(self._path)!r}, {self._ds.width}x{self._ds.height} "
                f"cells, res={self.res}, z_factor={self.z_factor:.10g})")

    # -- properties ----------------------------------------------------------------
    @property
    def path(self):
        """Path of the raster file."""
        return self._path

    @property
    def crs(self):
        """Raster CRS as :class:`pyproj.CRS` (may be compound)."""
        return self._crs

    @property
    def bounds(self):
        """(left, bottom, right, top) in raster CRS units."""
        return self._ds.bounds

    @property
    def res(self):
        """(x, y) pixel size in raster CRS units."""
        return self._ds.res

    @property
    def cell_size_m(self):
        """(x, y) pixel size in metres [m]; DataError for a geographic CRS."""
        factor = self._metres_per_horizontal_unit()
        return self._ds.res[0] * factor, self._ds.res[1] * factor

    @property
    def nodata(self):
        """Nodata value of the band, or None."""
        return self._ds.nodata

    @property
    def shape(self):
        """(rows, cols) of the raster."""
        return self._ds.height, self._ds.width

    # -- public sampling -------------------------------------------------------------
    def sample(self, x, y, crs=None):
        """Bilinear elevation at points.

        Parameters
        ----------
        x, y : float or array_like
            Point coordinates, broadcast against each other [CRS units].
        crs : anything pyproj.CRS accepts, optional
            CRS of ``x, y``; default the raster CRS.

        Returns
        -------
        numpy.ndarray of float64
            Elevation in the shape of the broadcast inputs [m]; NaN outside
            the raster or next to nodata.
        """
        xr, yr = self._to_raster_xy(x, y, crs)
        col_f, row_f = self._pixel_coords(xr, yr)
        if col_f.ndim == 1 and col_f.size and self._all_inside(col_f, row_f):
            return self._interpolate(col_f, row_f)
        out = np.full(col_f.shape, np.nan)
        inside = self._inside(col_f, row_f)
        if inside.any():
            out[inside] = self._interpolate(col_f[inside], row_f[inside])
        return out

    def sample_scattered(self, x, y, crs=None, threads=1):
        """As :meth:`sample`, for points that may lie far apart (the structures of a line); the same values.

        Points too spread out for one window (see :attr:`sparse_min_cells`) are
        read with no window held: each then reads only the cells it needs
        (usually one raster block decoded) instead of a window grown by
        :attr:`hold_margin_cells`, which may straddle four blocks. Points close
        together are one window read, held as :meth:`sample` holds it. With
        ``threads`` > 1 spread points are read by that many threads, each with
        its own handle on the raster.
        """
        u, v = self.grid_coords(x, y, crs=crs)
        finite = np.isfinite(u) & np.isfinite(v)
        if not finite.any():
            return self.sample(x, y, crs=crs)
        cells = (np.ptp(v[finite]) + 2.0) * (np.ptp(u[finite]) + 2.0)
        if cells <= max(self.sparse_min_cells, self.sparse_cells_per_point * int(finite.sum())):
            return self.sample(x, y, crs=crs)
        if threads > 1 and int(finite.sum()) >= 2 * threads:
            return self._sample_in_threads(x, y, crs, threads)
        held, self.hold_windows = self.hold_windows, 0
        try:
            return self.sample(x, y, crs=crs)
        finally:
            self.hold_windows = held

    def _sample_in_threads(self, x, y, crs, threads):
        """:meth:`sample_scattered` split over ``threads``: the first part here, each other part by a sampler of
        its own opened in its own thread (a GDAL handle serves one thread at a time; decoding a block releases
        the GIL). What those samplers met (implausible values, window reads) is added to this one's."""
        xr, yr = (a.ravel() for a in self._to_raster_xy(x, y, crs))
        parts = np.array_split(np.arange(xr.size), threads)
        out = np.empty(xr.size)
        others = [None] * (threads - 1)

        def in_own_sampler(k, rows):
            with TerrainSampler(self._path, z_units=self._z_units, crs=self._assigned_crs,
                                nodata=self._declared_nodata) as sampler:
                out[rows] = sampler.sample_scattered(xr[rows], yr[rows])
                others[k] = (dict(sampler.implausible_values), sampler.sample_window_count)

        with ThreadPoolExecutor(threads - 1, thread_name_prefix="terrain") as pool:
            pending = [pool.submit(in_own_sampler, k, rows) for k, rows in enumerate(parts[1:])]
            out[parts[0]] = self.sample_scattered(xr[parts[0]], yr[parts[0]])
            for done in pending:
                done.result()
        for values, reads in others:
            self.sample_window_count += reads
            for value, count in values.items():
                if value in self.implausible_values or len(self.implausible_values) < _SUSPECT_VALUES_KEPT:
                    self.implausible_values[value] = self.implausible_values.get(value, 0) + count
        return out.reshape(np.broadcast(np.asarray(x), np.asarray(y)).shape)

    def grid_coords(self, x, y, crs=None):
        """Continuous grid coordinates ``(u, v)`` of points: integer values are columns / rows of cell centres.

        ``u = col - 0.5``, ``v = row - 0.5`` (pixel (row, col) spans
        ``[col, col+1) x [row, row+1)``); the bilinear surface is smooth
        between integer ``u`` and ``v`` and kinks across them. ``x, y`` [CRS units] and ``crs`` as in
        :meth:`contains`; returns ``(u, v)`` as numpy arrays.
        """
        col_f, row_f = self._pixel_coords(*self._to_raster_xy(x, y, crs))
        col_f -= 0.5  # fresh arrays: shifted in place
        row_f -= 0.5
        return col_f, row_f

    def contains(self, x, y, crs=None):
        """True where a point lies within the raster footprint (edges included).

        Parameters
        ----------
        x, y : float or array_like
            Point coordinates [CRS units].
        crs : anything pyproj.CRS accepts, optional
            CRS of ``x, y``; default the raster CRS.

        Returns
        -------
        numpy.ndarray of bool
        """
        xr, yr = self._to_raster_xy(x, y, crs)
        return self._inside(*self._pixel_coords(xr, yr))

    def read_window_points(self, x, y, radius_m, crs=None, keep_nodata=False):
        """Every valid cell centre in the box around points, in one window read.

        Parameters
        ----------
        x, y : float or array_like
            Points whose bounding box is taken [CRS units].
        radius_m : float
            Margin added on each side of the bounding box [m]; converted to
            the raster's horizontal unit.
        crs : anything pyproj.CRS accepts, optional
            CRS of ``x, y``; default the raster CRS.
        keep_nodata : bool, default False
            Also return nodata cells, with ``zs`` NaN (to tell where the
            raster has no data rather than nothing there).

        Returns
        -------
        xs, ys : numpy.ndarray of float64
            Cell centres in the raster CRS [raster CRS units].
        zs : numpy.ndarray of float64
            Elevations at those centres [m]. Nodata cells are left out
            unless ``keep_nodata``.

        Raises
        ------
        DataError
            The raster CRS is geographic (a margin in metres is undefined).
        """
        xr, yr = self._to_raster_xy(x, y, crs)
        finite = np.isfinite(xr) & np.isfinite(yr)
        empty = (np.empty(0), np.empty(0), np.empty(0))
        if not finite.any():
            return empty
        margin = radius_m / self._metres_per_horizontal_unit()
        box = (xr[finite].min() - margin, yr[finite].min() - margin,
               xr[finite].max() + margin, yr[finite].max() + margin)
        window = self._window_covering_box(box)
        if window is None:
            return empty
        z = self._read(window)
        xs, ys = self._cell_centres(window)
        keep = ((xs >= box[0]) & (xs <= box[2]) & (ys >= box[1]) & (ys <= box[3]))
        if not keep_nodata:
            keep &= np.isfinite(z)
        return xs[keep], ys[keep], z[keep]

    # -- coordinates ------------------------------------------------------------------
    def _to_raster_xy(self, x, y, crs):
        x, y = np.broadcast_arrays(np.asarray(x, dtype=np.float64),
                                   np.asarray(y, dtype=np.float64))
        if crs is None:
            return x, y
        # Comparing CRSs costs more than sampling a span: remember the answer for the objects already seen.
        seen = self._seen_crs.get(id(crs))
        if seen is not None and seen[0] is crs:
            source = seen[1]
        else:
            source = pyproj.CRS.from_user_input(crs)
            if source == self._crs or source == self._horizontal_crs:
                source = None
            self._seen_crs[id(crs)] = (crs, source)
        if source is None:
            return x, y
        transformer = self._transformers.get(source)
        if transformer is None:
            try:
                transformer = pyproj.Transformer.from_crs(
                    _horizontal_part(source), self._horizontal_crs, always_xy=True)
            except pyproj.exceptions.ProjError as exc:
                raise DataError(f"terrain {self._path}: points in CRS {source.name!r} cannot be transformed "
                                f"to the raster CRS {self._crs.name!r} ({_first_line(exc)}); give both "
                                "inputs CRSs that PROJ can relate") from None
            self._transformers[source] = transformer
        xt, yt = transformer.transform(x, y)
        xt, yt = np.asarray(xt, dtype=np.float64), np.asarray(yt, dtype=np.float64)
        bad = ~(np.isfinite(xt) & np.isfinite(yt))  # failed projections come back as inf
        xt[bad] = np.nan
        yt[bad] = np.nan
        return xt, yt

    def _pixel_coords(self, x, y):
        """Continuous (col, row), new arrays; pixel (r, c) spans [c, c+1) x [r, r+1)."""
        inv = self._inverse
        with np.errstate(invalid="ignore", over="ignore"):  # NaN/inf inputs stay non-finite
            # (a x + b y) + c, evaluated in that order, in place
            col = inv.a * x
            col += inv.b * y
            col += inv.c
            row = inv.d * x
            row += inv.e * y
            row += inv.f
        return col, row

    def _inside(self, col_f, row_f):
        with np.errstate(invalid="ignore"):
            return ((col_f >= 0) & (col_f <= self._ds.width)
                    & (row_f >= 0) & (row_f <= self._ds.height))

    def _all_inside(self, col_f, row_f):
        """:meth:`_inside` for every point, from four reductions (a NaN fails them, as it fails ``_inside``)."""
        return bool(col_f.min() >= 0 and col_f.max() <= self._ds.width
                    and row_f.min() >= 0 and row_f.max() <= self._ds.height)

    def _metres_per_horizontal_unit(self):
        if self._horizontal_crs.is_geographic:
            raise DataError(f"terrain {self._path} has a geographic CRS; a projected CRS "
                            "in metres or feet is needed for distances")
        return self._horizontal_crs.axis_info[0].unit_conversion_factor

    # -- interpolation ----------------------------------------------------------------
    def _interpolate(self, col_f, row_f):
        """Bilinear values at in-raster pixel coordinates, tile by tile if spread; ``col_f``, ``row_f`` are
        overwritten (callers pass arrays of their own)."""
        height, width = self._ds.height, self._ds.width
        # Centre-based coordinates, clamped onto the outermost centres.
        u, v = col_f, row_f
        u -= 0.5
        np.maximum(u, 0.0, out=u)
        np.minimum(u, width - 1.0, out=u)
        v -= 0.5
        np.maximum(v, 0.0, out=v)
        np.minimum(v, height - 1.0, out=v)
        # u, v >= 0, so truncation is the floor
        c0 = u.astype(np.int64)
        np.minimum(c0, max(width - 2, 0), out=c0)
        r0 = v.astype(np.int64)
        np.minimum(r0, max(height - 2, 0), out=r0)
        box = (int(r0.min()), int(r0.max()), int(c0.min()), int(c0.max()))
        span_cells = (box[1] - box[0] + 2) * (box[3] - box[2] + 2)
        sparse = span_cells > self.sparse_min_cells and span_cells > self.sparse_cells_per_point * u.size
        if span_cells <= min(self.max_window_cells, self.hold_max_cells) and not sparse:
            return self._interpolate_in_window(u, v, c0, r0, box)
        # Too spread out for one read: a few far-apart points (the structures of a long line) by small tiles;
        # a long corridor (a tension section's wires) by tiles whose windows can be held, so only the cells
        # near the points are read and never the whole box around them.
        tile = self.sparse_tile if sparse else self._corridor_tile()
        tile_key = (r0 // tile) * (width // tile + 1) + (c0 // tile)
        out = np.empty(u.shape)
        order = np.argsort(tile_key, kind="stable")
        _, starts = np.unique(tile_key[order], return_index=True)
        for group in np.split(order, starts[1:]):
            out[group] = self._interpolate_in_window(u[group], v[group], c0[group], r0[group])
        return out

    def _corridor_tile(self):
        """Side of the square tiles a wide point set is read by [cells]: its window, grown by the hold margin,
        stays within ``hold_max_cells`` (and ``max_window_cells``)."""
        side = min(math.isqrt(self.hold_max_cells) - 2 * self.hold_margin_cells, math.isqrt(self.max_window_cells))
        return max(side - 1, 1)

    def _interpolate_in_window(self, u, v, c0, r0, box=None):
        """Bilinear values from one window; ``box`` = (r0 min, r0 max, c0 min, c0 max) when already known."""
        row_off, row_hi, col_off, col_hi = box or (int(r0.min()), int(r0.max()), int(c0.min()), int(c0.max()))
        n_rows = min(row_hi + 2, self._ds.height) - row_off
        n_cols = min(col_hi + 2, self._ds.width) - col_off
        values, top, left = self._window_values(Window(col_off, row_off, n_cols, n_rows))
        # Corners by flat index into the (C-contiguous) array holding the window: several times faster than
        # 2-D fancy indexing. c0 <= col_hi = col_off + n_cols - 2 whenever the raster is two cells wide, so the
        # right neighbour is one cell on (none on a one-cell-wide raster: the same cell); rows alike.
        stride = values.shape[1]
        flat = values.reshape(-1)
        right, down = min(n_cols - 1, 1), stride * min(n_rows - 1, 1)
        corner = r0 * stride
        corner += c0
        corner += (top - row_off) * stride + (left - col_off)
        # The corners lie in the window by construction (r0, c0 within the box), so take() may skip its bound
        # check ("clip" changes nothing). Clipping would turn a wrong index into a wrong ground height without a
        # word, so the bound is checked here once per window, for every corner (two reductions).
        if corner.size and (int(corner.min()) < 0 or int(corner.max()) + down + right >= flat.size):
            raise RuntimeError(f"terrain {self._path}: a bilinear corner falls outside window {values.shape} "
                               f"(rows {row_off}-{row_hi}, columns {col_off}-{col_hi})")
        # ((z00 (1 - fu) + z01 fu) (1 - fv) + (z10 (1 - fu) + z11 fu) fv), in that order, in few arrays.
        # NaN in any corner propagates, even at zero weight: that is intended.
        fu = u - c0
        gu = 1.0 - fu
        upper = flat.take(corner, mode="clip")
        upper *= gu
        term = flat[right:].take(corner, mode="clip")
        term *= fu
        upper += term
        lower = flat[down:].take(corner, mode="clip")
        lower *= gu
        flat[down + right:].take(corner, out=term, mode="clip")
        term *= fu
        lower += term
        fv = gu
        np.subtract(v, r0, out=fv)
        lower *= fv
        np.subtract(1.0, fv, out=fv)
        upper *= fv
        upper += lower
        return upper

    # -- raw reads --------------------------------------------------------------------
    def _window_values(self, window):
        """``(values, top, left)``: a C-contiguous array holding the cells of ``window`` as :meth:`_read` gives
        them at ``values[top:top + height, left:left + width]`` (a held window, or the read itself)."""
        if self.hold_windows <= 0:
            return self._read(window), 0, 0
        for i, (held, values) in enumerate(self._held):
            top, left = window.row_off - held.row_off, window.col_off - held.col_off
            if (top >= 0 and left >= 0 and top + window.height <= held.height
                    and left + window.width <= held.width):
                if i:
                    self._held.insert(0, self._held.pop(i))
                return values, top, left
        block_rows, block_cols = self._ds.block_shapes[0]
        row0, row1 = self._grown(window.row_off, window.row_off + window.height, block_rows, self._ds.height)
        col0, col1 = self._grown(window.col_off, window.col_off + window.width, block_cols, self._ds.width)
        grown = Window(col0, row0, col1 - col0, row1 - row0)
        if grown.width * grown.height > self.hold_max_cells:
            return self._read(window), 0, 0
        values = self._read(grown)
        self._held = [(grown, values)] + self._held[:self.hold_windows - 1]
        return values, window.row_off - row0, window.col_off - col0

    def _grown(self, low, high, block, size):
        """Cells [low, high) along one axis grown by ``hold_margin_cells`` to be held, but, where the raster's
        blocks are larger than the margin, not into blocks the read would not decode anyway."""
        m = self.hold_margin_cells
        low_m, high_m = max(low - m, 0), min(high + m, size)
        if block <= m:
            return low_m, high_m
        return max(low_m, low // block * block), min(high_m, -(-high // block) * block)

    def _read(self, window):
        """Window read as float64 metres, NaN where masked."""
        try:
            with _quiet_undecodable_gdal_messages():
                if self._mask_from_nodata:
                    # Comparing with nodata here is ~100x faster than GDAL's masked read.
                    z = self._ds.read(1, window=window).astype(np.float64)
                else:
                    z = np.ma.filled(self._ds.read(1, window=window, masked=True).astype(np.float64), np.nan)
        except (rasterio.errors.RasterioError, UnicodeDecodeError) as exc:
            raise DataError(f"terrain {self._path}: cells of window {window} cannot be read, the file "
                            f"may be truncated or corrupt ({_first_line(exc)})") from None
        nodata = self._ds.nodata
        if self._mask_from_nodata and nodata is not None and not np.isnan(nodata):
            z[z == nodata] = np.nan
        if self._declared_nodata is not None:
            z[z == self._declared_nodata] = np.nan
        self.sample_window_count += 1
        self.last_window = window
        if (self._scale, self._offset, self.z_factor) == (1.0, 0.0, 1.0):
            return self._mask_implausible(z, z)  # stored in metres already: no copy
        return self._mask_implausible(z, (z * self._scale + self._offset) * self.z_factor)

    def _mask_implausible(self, stored, metres):
        """Elevations no terrain has (an untagged fill value) become NaN; the stored values are remembered."""
        low, high = PLAUSIBLE_Z_M
        with np.errstate(invalid="ignore"):
            bad = (metres < low) | (metres > high)
        if bad.any():
            values, counts = np.unique(stored[bad], return_counts=True)
            for value, count in zip(values.tolist(), counts.tolist()):
                if value in self.implausible_values or len(self.implausible_values) < _SUSPECT_VALUES_KEPT:
                    self.implausible_values[value] = self.implausible_values.get(value, 0) + count
            metres[bad] = np.nan
        return metres

    def implausible_warnings(self, label="terrain", key="terrain_nodata"):
        """One loud sentence per implausible stored value met, naming the raster and the value."""
        low, high = PLAUSIBLE_Z_M
        return [f"{label} {self._path}: CELLS OF VALUE {value:.10g} READ AS NODATA: that is no elevation on earth "
                f"(outside {low:g} to {high:g} m) and the raster does not tag it as nodata, so it is taken for "
                f"a fill value of a void; clearance there is unknown, never clear. Declare it with [inputs] "
                f"{key} = {value:.10g} to confirm, or fix the raster"
                for value in sorted(self.implausible_values)]

    def _window_covering_box(self, box):
        """Smallest in-raster window holding every cell centre inside ``box``."""
        left, bottom, right, top = box
        cols, rows = self._pixel_coords(np.array([left, left, right, right]),
                                        np.array([bottom, top, bottom, top]))
        col_lo = max(int(np.floor(cols.min())), 0)
        row_lo = max(int(np.floor(rows.min())), 0)
        col_hi = min(int(np.ceil(cols.max())), self._ds.width)
        row_hi = min(int(np.ceil(rows.max())), self._ds.height)
        if col_hi <= col_lo or row_hi <= row_lo:
            return None
        return Window(col_lo, row_lo, col_hi - col_lo, row_hi - row_lo)

    def _cell_centres(self, window):
        cols = np.arange(window.col_off, window.col_off + window.width) + 0.5
        rows = np.arange(window.row_off, window.row_off + window.height) + 0.5
        cols, rows = np.meshgrid(cols, rows)
        t = self._ds.transform
        return t.a * cols + t.b * rows + t.c, t.d * cols + t.e * rows + t.f


def _open_single_band(path, assigned_crs=None):
    """Open the raster and check it has a CRS (its own or ``assigned_crs``) and one band; DataError if not."""
    if not path.is_file():
        raise DataError(f"terrain {path} cannot be opened: file not found"
                        + (" (it is a folder)" if path.is_dir() else ""))
    missing = _missing_vrt_sources(path)
    if missing:
        raise DataError([f"terrain {path}: its source file {source} is missing; restore it or rebuild the VRT"
                         for source in missing])
    try:
        with _quiet_undecodable_gdal_messages():
            ds = rasterio.open(path)
    except (rasterio.errors.RasterioError, OSError, UnicodeDecodeError) as exc:
        raise DataError(f"terrain {path} cannot be opened as a raster: {_first_line(exc)}") from None
    problem = None
    if (ds.crs is None or not ds.crs.to_wkt()) and not assigned_crs:
        problem = f"terrain {path} has no CRS; set [inputs] terrain_crs in the project file"
    elif ds.count != 1:
        problem = f"terrain {path} has {ds.count} bands; exactly one elevation band is expected"
    if problem:
        ds.close()
        raise DataError(problem)
    return ds


def _missing_vrt_sources(path) -> list[str]:
    """Source files a VRT names that do not exist (GDAL would only say the VRT is corrupt); [] for other files.

    Sources on GDAL virtual file systems (``/vsi...``) and anything that is not a plain path are not checked.
    """
    if path.suffix.lower() != ".vrt":
        return []
    try:
        root = ElementTree.parse(path).getroot()
    except (ElementTree.ParseError, OSError):
        return []   # not XML: GDAL's own error names the file
    missing = []
    for element in root.iter("SourceFilename"):
        name = (element.text or "").strip()
        if not name or name.startswith("/vsi") or ":" in name[2:]:
            continue
        source = path.parent / name if element.get("relativeToVRT", "0") == "1" else Path(name)
        if not source.exists() and str(source) not in missing:
            missing.append(str(source))
    return missing


def _parse_crs(path, ds, assigned=None):
    """The raster CRS as :class:`pyproj.CRS` and a note; DataError when PROJ cannot read it.

    ``assigned`` ([inputs] terrain_crs) only labels a raster that has no CRS:
    one that contradicts the file's own CRS is refused, since either label
    may be the wrong one and a wrong label moves every span off its ground.
    """
    try:
        own = ds.crs.to_wkt() if ds.crs is not None else ""
        if not assigned:
            return pyproj.CRS.from_wkt(own), ""
        given = pyproj.CRS.from_user_input(assigned)
        if not own:
            return given, f"terrain CRS {assigned} from [inputs] terrain_crs (the file has none)"
        file_crs = pyproj.CRS.from_wkt(own)
    except (pyproj.exceptions.CRSError, rasterio.errors.RasterioError) as exc:
        raise DataError(f"terrain {path} has a CRS that cannot be understood: {_first_line(exc)}") from None
    if not (file_crs.equals(given, ignore_axis_order=True)
            or _horizontal_part(file_crs).equals(given, ignore_axis_order=True)):
        raise DataError(f"terrain {path} has its own CRS {file_crs.to_string()}, but [inputs] terrain_crs = "
                        f"{assigned!r} says otherwise; terrain_crs only labels a raster without a CRS: remove it, "
                        "or fix the file's CRS if that is the wrong one")
    return file_crs, f"terrain CRS {file_crs.to_string()} from the file ([inputs] terrain_crs agrees)"


def _first_line(exc):
    text = str(exc).strip()
    return text.splitlines()[0][:200] if text else type(exc).__name__


_hook_lock = threading.Lock()
_hook_users = 0
_saved_hooks = None


@contextlib.contextmanager
def _quiet_undecodable_gdal_messages():
    """Keep GDAL messages that are not UTF-8 (bytes of a corrupt file) from printing a traceback.

    rasterio decodes every GDAL message in a callback; a message quoting binary
    content fails to decode there, and Python prints that failure through
    ``sys.unraisablehook`` or ``sys.excepthook``. The open or read still fails
    and is reported as a DataError; only the stray print is dropped. The hooks
    are swapped by the first user and restored by the last, so threads reading
    at the same time never leave the filter installed.
    """
    global _hook_users, _saved_hooks
    with _hook_lock:
        if _hook_users == 0:
            _saved_hooks = (sys.unraisablehook, sys.excepthook)
            sys.unraisablehook, sys.excepthook = _filtered_hooks(*_saved_hooks)
        _hook_users += 1
    try:
        yield
    finally:
        with _hook_lock:
            _hook_users -= 1
            if _hook_users == 0:
                sys.unraisablehook, sys.excepthook = _saved_hooks


def _filtered_hooks(unraisable_hook, except_hook):
    def unraisable(info):
        if not isinstance(info.exc_value, UnicodeDecodeError):
            unraisable_hook(info)

    def excepthook(kind, value, tb):
        if not isinstance(value, UnicodeDecodeError):
            except_hook(kind, value, tb)

    return unraisable, excepthook


def _horizontal_part(crs):
    """The horizontal CRS of a compound CRS, else the CRS itself."""
    if crs.is_compound:
        for sub in crs.sub_crs_list:
            if not sub.is_vertical:
                return sub
    return crs


def _declared_vertical_unit(crs):
    """(unit name, metres per unit) of the CRS's up axis, or None."""
    for axis in crs.axis_info:
        if axis.direction.lower() == "up":
            return axis.unit_name, axis.unit_conversion_factor
    return None


def _resolve_z_factor(z_units, declared):
    """Vertical factor [m/unit] and a note: a foot unit in the CRS wins over z_units."""
    configured = Z_UNIT_FACTORS[z_units]
    if declared is not None and "foot" in declared[0].lower():
        name, factor = declared
        note = f"raster CRS declares vertical unit {name!r}: elevations x{factor:.10g} to metres"
        if z_units != "m" and not math.isclose(factor, configured, rel_tol=1e-9):
            note += f" (z_units={z_units!r} ignored in favour of the CRS)"
        return factor, note
    note = f"z_units={z_units!r}: elevations x{configured:.10g} to metres"
    if declared is not None and z_units != "m":
        note += f" (raster CRS declares {declared[0]!r}; configured z_units kept)"
    return configured, note


@dataclass(frozen=True)
class RasterRef:
    """A raster by path and vertical unit; ``open()`` gives this process's sampler of it (opened once)."""

    path: str
    z_units: str = "m"
    crs: str | None = None
    nodata: float | None = None
    hold_windows: int = 0

    def open(self) -> TerrainSampler:
        sampler = _OPEN_IN_PROCESS.get(self)
        if sampler is None:
            sampler = _OPEN_IN_PROCESS[self] = TerrainSampler(self.path, z_units=self.z_units, crs=self.crs,
                                                              nodata=self.nodata, hold_windows=self.hold_windows)
        return sampler


#: Samplers opened by references in this (worker) process, kept for the next section.
_OPEN_IN_PROCESS: dict[RasterRef, TerrainSampler] = {}
