"""Building grids: route layouts, keypoints, the EEP builder and the importer of text tracks.

The library does the work (include/hrtrail/build.h); Python passes arrays and
names.  Units: masses in Msun, ages in yr (log10 age/yr in track data), Z the
metal mass fraction, logarithms base 10 (L in Lsun, Teff in K, R in Rsun).

    routes = default_routes()                                  # the default grid's layouts
    kp = keypoints_find(columns, routes[0])                    # keypoints of a raw track
    b = Builder(routes, z_ref=0.014); b.add_track(0.014, track); b.write("my.h5")
    imp = Importer(); imp.map("age_yr=age*Myr"); imp.add_file("m1.0.csv", z=0.014)
    report = imp.run("my.h5")                                  # an ImportReport
"""
import collections
import ctypes
from typing import Callable, List, Optional, Sequence

try:
    import numpy as _np
except ImportError:  # NumPy is needed by these calls, not by importing the package
    _np = None

from ._clib import (ACCURACY_PROGRESS_FN, IMPORT_MAX_KP, KP_COLUMNS, PROGRESS_FN, HrtAccuracyRow, HrtImportRowReport, HrtImportTrackReport, HrtKpColumns,
                    HrtKpResult, HrtRouteSpec, HrtTrackData, lib, text)
from .enums import Remnant, Status
from .core import _Owned
from .errors import InvalidInputError, check, new_error
from . import units as _u

RouteSpec = collections.namedtuple("RouteSpec", "name keypoints segment_samples")
RouteSpec.__doc__ = """The EEP layout of one route (hrt_route_spec): its name, keypoint names in
order, and the EEP count of each segment between consecutive keypoints (one fewer)."""

KeypointResult = collections.namedtuple("KeypointResult", "found sample how why")
KeypointResult.__doc__ = """Keypoints found on a raw track (hrt_kp_result): names found (a prefix of the
route's), their sample indices, how each was found ('flag', 'columns', 'phase', 'start'),
and why the next keypoint was not found ('' when all were)."""

_HOW = {1: "flag", 2: "columns", 3: "phase", 4: "start"}


def default_route(r: int) -> Optional[RouteSpec]:
    """Layout of route r (0, 1, ... by increasing mass) of the default grid (hrt_default_route); None past the last."""
    spec = HrtRouteSpec()
    names = (ctypes.c_char_p * IMPORT_MAX_KP)()
    rc = lib.hrt_default_route(int(r), ctypes.byref(spec), names)
    if rc == Status.INVALID:
        return None
    check(rc, None, "hrt_default_route(%d)" % r)
    k = spec.n_keypoints
    return RouteSpec(text(spec.name), tuple(text(names[i]) for i in range(k)),
                     tuple(spec.segment_samples[i] for i in range(k - 1)))


def default_routes() -> List[RouteSpec]:
    """Every route of the default grid's layout, in order."""
    out, r = [], 0
    while True:
        spec = default_route(r)
        if spec is None:
            return out
        out.append(spec)
        r += 1


class _Routes:
    """C copies of RouteSpecs, kept alive as long as this object."""

    def __init__(self, routes):
        routes = [RouteSpec(*r) for r in routes]
        self.arr = (HrtRouteSpec * max(1, len(routes)))()
        self.keep = []
        for i, r in enumerate(routes):
            names = (ctypes.c_char_p * len(r.keypoints))(*[k.encode() for k in r.keypoints])
            segs = (ctypes.c_int * max(1, len(r.segment_samples)))(*[int(s) for s in r.segment_samples])
            nm = r.name.encode()
            self.keep += [names, segs, nm]
            self.arr[i] = HrtRouteSpec(nm, len(r.keypoints), names, segs)
        self.n = len(routes)


def _f8(x, name, kind="fraction"):
    if x is None:
        return None
    return _np.ascontiguousarray(_u.array(x, kind, name), dtype=_np.float64).ravel()


def _dp(a):
    return None if a is None else a.ctypes.data_as(ctypes.POINTER(ctypes.c_double))


class _Columns:
    """hrt_kp_columns from a mapping of column name -> array (KP_COLUMNS, phase, flag)."""

    def __init__(self, columns):
        unknown = set(columns) - set(KP_COLUMNS) - {"phase", "flag"}
        if unknown:
            raise InvalidInputError(Status.INVALID, "unknown columns %s (known: %s, phase, flag)"
                                    % (", ".join(sorted(unknown)), ", ".join(KP_COLUMNS)))
        self.c = HrtKpColumns()
        self.keep = []
        n = None
        for name in KP_COLUMNS:
            a = _f8(columns.get(name), name, "age" if name == "age_yr" else "mass" if name.endswith("msun")
                    else "fraction")
            if a is not None:
                if n is not None and a.size != n:
                    raise InvalidInputError(Status.INVALID, "column %s has %d values, not %d" % (name, a.size, n))
                n = a.size
                self.keep.append(a)
                setattr(self.c, name, _dp(a))
        if columns.get("phase") is not None:
            ph = _np.ascontiguousarray(columns["phase"], dtype=_np.intc).ravel()
            self.keep.append(ph)
            self.c.phase = ph.ctypes.data_as(ctypes.POINTER(ctypes.c_int))
        if columns.get("flag") is not None:
            fl = (ctypes.c_char_p * len(columns["flag"]))(*[(f or "").encode() for f in columns["flag"]])
            self.keep.append(fl)
            self.c.flag = fl
        self.c.n = n or 0


def _kp_result(r, route):
    k = r.n_found
    return KeypointResult(tuple(route.keypoints[:k]), tuple(r.sample[i] for i in range(k)),
                          tuple(_HOW.get(r.how[i], r.how[i]) for i in range(k)), r.why.decode("utf-8", "replace"))


def keypoints_find(columns: dict, route: RouteSpec) -> KeypointResult:
    """Keypoints of a route's layout on a raw track (hrt_keypoints_find).

    columns  {name: array}: age_yr (yr, increasing), log_l_lsun, log_teff_k required; mass_msun,
             central_x, central_y, he_core_mass_msun, co_core_mass_msun, phase (codes), flag
             (keypoint names or '') optional (tracks/FORMAT.md, "Keypoint criteria")
    route    a RouteSpec (default_route(r))
    """
    cols, rt = _Columns(columns), _Routes([route])
    out = HrtKpResult()
    e, pe = new_error()
    check(lib.hrt_keypoints_find(ctypes.byref(cols.c), rt.arr, ctypes.byref(out), pe), e, "hrt_keypoints_find")
    return _kp_result(out, RouteSpec(*route))


def keypoints_route(columns: dict, routes: Sequence[RouteSpec]):
    """The route a raw track follows (hrt_keypoints_route): (route index or -1, set of tied route indices,
    KeypointResult on the chosen route)."""
    cols, rt = _Columns(columns), _Routes(routes)
    r, cand, out = ctypes.c_int(), ctypes.c_uint(), HrtKpResult()
    e, pe = new_error()
    check(lib.hrt_keypoints_route(ctypes.byref(cols.c), rt.n, rt.arr, ctypes.byref(r), ctypes.byref(cand),
                                  ctypes.byref(out), pe), e, "hrt_keypoints_route")
    tied = {i for i in range(32) if cand.value >> i & 1}
    kp = _kp_result(out, RouteSpec(*routes[r.value])) if r.value >= 0 else KeypointResult((), (), (), "")
    return r.value, tied, kp


TRACK_COLUMNS = ("log_age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "mass_msun", "he_core_mass_msun",
                 "co_core_mass_msun")


class Builder(_Owned):
    """A grid under construction (hrt_builder): add tracks, then write the HDF5 file.

    Builder(routes, z_ref)   routes: RouteSpecs by increasing mass (e.g. default_routes()),
                             z_ref: the reference metallicity of [Fe/H]
    """

    def __init__(self, routes: Sequence[RouteSpec], z_ref: float):
        self._h = None
        self._routes = _Routes(routes)
        self._extra_names = []
        h = ctypes.c_void_p()
        e, pe = new_error()
        check(lib.hrt_builder_new(self._routes.n, self._routes.arr, _u.value(z_ref, "fraction", "z_ref"),
                                  ctypes.byref(h), pe), e, "hrt_builder_new")
        self._h = h

    _what = "builder"

    def _free(self, h):
        """Free the builder (close() or collection)."""
        lib.hrt_builder_free(h)

    def _track(self, track):
        keep = []
        t = HrtTrackData(initial_mass_msun=_u.value(track["initial_mass_msun"], "mass", "initial_mass_msun"),
                         route=int(track["route"]), remnant=int(track.get("remnant", Remnant.NONE)),
                         remnant_mass_msun=_u.value(track.get("remnant_mass_msun", float("nan")), "mass",
                                                    "remnant_mass_msun"))
        n = None
        for name in TRACK_COLUMNS:
            a = _f8(track.get(name), name, "mass" if name.endswith("_msun") else "fraction")
            if a is not None:
                if n is not None and a.size != n:
                    raise InvalidInputError(Status.INVALID, "column %s has %d values, not %d" % (name, a.size, n))
                n = a.size
                keep.append(a)
                setattr(t, name, _dp(a))
        t.n = n or 0
        ph = _np.ascontiguousarray(track["phase"], dtype=_np.intc).ravel()
        keep.append(ph)
        t.phase = ph.ctypes.data_as(ctypes.POINTER(ctypes.c_int))
        if track.get("keypoint_sample") is not None:
            ks = _np.ascontiguousarray(track["keypoint_sample"], dtype=_np.uintp).ravel()
            keep.append(ks)
            t.n_keypoints = ks.size
            t.keypoint_sample = ks.ctypes.data_as(ctypes.POINTER(ctypes.c_size_t))
        return t, keep

    def declare_extra(self, name: str, unit: str = "", meaning: str = "", single: bool = False) -> None:
        """Declare an extra per-EEP quantity (hrt_builder_declare_extra), before any track; single=True stores
        it in single precision (hrt_builder_set_extra_single).  Tracks then give it in their dict's "extra"
        entry: {name: array of the track's length}."""
        e, pe = new_error()
        check(lib.hrt_builder_declare_extra(self._handle, name.encode(), unit.encode(), meaning.encode(), pe), e,
              "hrt_builder_declare_extra")
        self._extra_names.append(name)
        if single:
            check(lib.hrt_builder_set_extra_single(self._handle, name.encode(), 1, pe), e,
                  "hrt_builder_set_extra_single")

    @property
    def extra_count(self) -> int:
        """Number of extra quantities declared (hrt_builder_extra_count)."""
        return lib.hrt_builder_extra_count(self._handle)

    def _extra_columns(self, track, n):
        extra = track.get("extra") or {}
        unknown = set(extra) - set(self._extra_names)
        if unknown:
            raise InvalidInputError(Status.INVALID, "extra columns %s were not declared" % sorted(unknown))
        cols = []
        for name in self._extra_names:
            if name not in extra:
                raise InvalidInputError(Status.INVALID, "the track lacks the declared extra quantity %r" % name)
            a = _f8(extra[name], name)
            if a.size != n:
                raise InvalidInputError(Status.INVALID, "extra %s has %d values, not %d" % (name, a.size, n))
            cols.append(a)
        ptrs = (ctypes.c_void_p * max(len(cols), 1))(*[a.ctypes.data for a in cols])
        return cols, ptrs

    def _add(self, z, track, eep):
        t, keep = self._track(track)
        e, pe = new_error()
        zz = _u.value(z, "fraction", "z")
        if not self._extra_names:
            fn, name = (lib.hrt_builder_add_eep_track, "hrt_builder_add_eep_track") if eep else \
                (lib.hrt_builder_add_track, "hrt_builder_add_track")
            check(fn(self._handle, zz, ctypes.byref(t), pe), e, name)
            return
        cols, ptrs = self._extra_columns(track, t.n)
        fn, name = (lib.hrt_builder_add_eep_track_extra, "hrt_builder_add_eep_track_extra") if eep else \
            (lib.hrt_builder_add_track_extra, "hrt_builder_add_track_extra")
        check(fn(self._handle, zz, ctypes.byref(t), len(cols), ptrs, pe), e, name)

    def add_track(self, z: float, track: dict) -> None:
        """Resample a raw track onto its route's EEPs and add it at metallicity z (hrt_builder_add_track).

        track: {initial_mass_msun, route (index), remnant (Remnant, default NONE), remnant_mass_msun,
        log_age_yr, log_l_lsun, log_teff_k, log_r_rsun (optional), mass_msun, he_core_mass_msun,
        co_core_mass_msun (arrays in increasing age), phase (codes), keypoint_sample (sample index of
        each keypoint reached), extra ({name: array}, every declared extra quantity;
        hrt_builder_add_track_extra)}."""
        self._add(z, track, False)

    def add_eep_track(self, z: float, track: dict) -> None:
        """Add a track already on the route's EEPs (hrt_builder_add_eep_track, with extras
        hrt_builder_add_eep_track_extra); keypoint_sample not used."""
        self._add(z, track, True)

    def set_route_boundaries(self, z: float, mass_msun) -> None:
        """The n_routes - 1 route-boundary masses (Msun) of metallicity z (hrt_builder_set_route_boundaries)."""
        m = _f8(mass_msun, "mass_msun", "mass")
        e, pe = new_error()
        check(lib.hrt_builder_set_route_boundaries(self._handle, _u.value(z, "fraction", "z"), m.ctypes.data, pe), e,
              "hrt_builder_set_route_boundaries")

    def set_compression(self, level: int) -> None:
        """Deflate level 0..9 of the numeric datasets (hrt_builder_set_compression; 0: none)."""
        if isinstance(level, bool) or not isinstance(level, int):
            raise InvalidInputError(Status.INVALID, "level must be an integer 0..9, not %r" % (level,))
        e, pe = new_error()
        check(lib.hrt_builder_set_compression(self._handle, level, pe), e, "hrt_builder_set_compression")

    def set_attribute(self, name: str, value: str) -> None:
        """A text root attribute of the file (description, source, created_by, ...)."""
        e, pe = new_error()
        check(lib.hrt_builder_set_attribute(self._handle, name.encode(), value.encode(), pe), e,
              "hrt_builder_set_attribute")

    def write(self, path) -> None:
        """Write the grid (tracks/FORMAT.md) atomically to path (hrt_builder_write)."""
        e, pe = new_error()
        check(lib.hrt_builder_write(self._handle, _u.path(path), pe), e, "hrt_builder_write")


DroppedRow = collections.namedtuple("DroppedRow", "line column code message")
DroppedRow.__doc__ = "A data row dropped in lenient mode: 1-based line and column, Status of the problem, message."


class TrackReport:
    """What an import did with one file (hrt_import_track_report).

    file, status (Status: OK if in the grid), line, column (of the problem; 0 if none), message, notes,
    initial_mass_msun, z, route (index or -1), route_name, truncated (bool), remnant (Remnant),
    remnant_mass_msun, n_rows, n_rows_dropped, keypoints ({name: age_yr}), keypoint_lines
    ({name: line}), keypoint_how ({name: 'flag'|'columns'|'phase'|'start'}), missing, dropped (list of DroppedRow)
    """

    def __init__(self, imp, i, c):
        self.file = text(c.file)
        self.status = Status(c.status) if c.status in Status._value2member_map_ else c.status
        self.line, self.column = c.line, c.column
        self.message, self.notes = c.message.decode("utf-8", "replace"), c.notes.decode("utf-8", "replace")
        self.initial_mass_msun, self.z, self.route = c.initial_mass_msun, c.z, c.route
        self.route_name = text(lib.hrt_import_route_name(imp, c.route)) if c.route >= 0 else None
        self.truncated = bool(c.truncated)
        self.remnant = Remnant(c.remnant) if c.remnant in Remnant._value2member_map_ else c.remnant
        self.remnant_mass_msun, self.n_rows, self.n_rows_dropped = c.remnant_mass_msun, c.n_rows, c.n_rows_dropped
        names = [text(lib.hrt_import_keypoint_name(imp, c.route, k)) for k in range(c.n_keypoints)] \
            if c.route >= 0 else ["%d" % k for k in range(c.n_keypoints)]
        self.keypoints = collections.OrderedDict((names[k], c.keypoint_age_yr[k]) for k in range(c.n_keypoints))
        self.keypoint_lines = {names[k]: c.keypoint_line[k] for k in range(c.n_keypoints)}
        self.keypoint_how = {names[k]: _HOW.get(c.keypoint_how[k], c.keypoint_how[k]) for k in range(c.n_keypoints)}
        self.missing = c.missing.decode("utf-8", "replace")
        self.dropped = []
        row = HrtImportRowReport()
        for k in range(min(c.n_rows_dropped, 10000)):
            if lib.hrt_import_dropped_row(imp, i, k, ctypes.byref(row)) != 0:
                break
            self.dropped.append(DroppedRow(row.line, row.column, Status(row.code) if row.code in
                                           Status._value2member_map_ else row.code, row.message.decode("utf-8", "replace")))

    def __repr__(self):
        return "<TrackReport %s: %s, %.4g Msun, Z %.4g, route %s>" % (
            self.file, getattr(self.status, "name", self.status), self.initial_mass_msun, self.z, self.route_name)


class ImportReport:
    """The result of Importer.run(): tracks (list of TrackReport, in the order added), routes (names),
    z_values (metallicity groups written) and route_boundaries ({z: (Msun, ...)})."""

    def __init__(self, imp):
        h = imp._handle
        self.tracks = []
        c = HrtImportTrackReport()
        for i in range(lib.hrt_import_n_tracks(h)):
            check(lib.hrt_import_track(h, i, ctypes.byref(c)), None, "hrt_import_track(%d)" % i)
            self.tracks.append(TrackReport(h, i, c))
        self.routes = imp.routes
        nr = len(self.routes)
        self.z_values = tuple(lib.hrt_import_z(h, iz) for iz in range(lib.hrt_import_n_z(h)))
        self.route_boundaries = {z: tuple(lib.hrt_import_route_boundary(h, iz, b) for b in range(nr - 1))
                                 for iz, z in enumerate(self.z_values)}

    def __repr__(self):
        ok = sum(1 for t in self.tracks if t.status == Status.OK)
        return "<ImportReport %d of %d tracks in the grid, %d metallicities>" % (ok, len(self.tracks), len(self.z_values))


class Importer(_Owned):
    """An import of text tracks into a grid (hrt_import): map columns, add files, run.

    Importer(routes=None, z_ref=None, lenient=False, force=False, progress=None, pre_ms=False)
    routes    RouteSpecs (default: the default grid's, each from its ZAMS); z_ref default 0.014
    pre_ms    the tracks start on their birthline: the default grid's layouts whole
              (hrt_import_set_pre_ms; ignored when routes are given)
    lenient   drop and report bad rows and files instead of failing
    force     write a grid even when its routes collapse
    progress  callable(done, total, file) after each file is read

    The column map's keys are the vocabulary of tracks/FORMAT.md ("Importing
    text tracks"): e.g. imp.map("age_yr=age*Myr, log_l_lsun=logL").  Every
    failure raises an HrtrailError with the library's message (file:line:column).
    """

    def __init__(self, routes: Optional[Sequence[RouteSpec]] = None, z_ref: Optional[float] = None,
                 lenient: bool = False, force: bool = False,
                 progress: Optional[Callable[[int, int, str], None]] = None, pre_ms: bool = False):
        self._h = None
        h = ctypes.c_void_p()
        e, pe = new_error()
        check(lib.hrt_import_new(ctypes.byref(h), pe), e, "hrt_import_new")
        self._h = h
        self._cb = None
        self._report = None
        if pre_ms and routes is None:
            e, pe = new_error()
            check(lib.hrt_import_set_pre_ms(h, 1, pe), e, "hrt_import_set_pre_ms")
        if routes is not None:
            rt = _Routes(routes)
            e, pe = new_error()
            check(lib.hrt_import_set_routes(h, rt.n, rt.arr, pe), e, "hrt_import_set_routes")
        if z_ref is not None:
            e, pe = new_error()
            check(lib.hrt_import_set_z_ref(h, _u.value(z_ref, "fraction", "z_ref"), pe), e, "hrt_import_set_z_ref")
        check(lib.hrt_import_set_lenient(h, 1 if lenient else 0), None, "hrt_import_set_lenient")
        check(lib.hrt_import_set_force(h, 1 if force else 0), None, "hrt_import_set_force")
        if progress is not None:
            def cb(user, done, total, f):
                try:
                    progress(done, total, text(f))
                except Exception:  # an exception cannot cross the C call: the import goes on
                    pass
            self._cb = PROGRESS_FN(cb)
            check(lib.hrt_import_set_progress(h, self._cb, None), None, "hrt_import_set_progress")

    _what = "importer"

    def _free(self, h):
        """Free the import and its report (close() or collection)."""
        lib.hrt_import_free(h)

    def map(self, entries: str) -> "Importer":
        """Add column-map entries, "key=value" separated by commas, semicolons, blanks or new lines (hrt_import_map)."""
        e, pe = new_error()
        check(lib.hrt_import_map(self._handle, entries.encode(), pe), e, "hrt_import_map")
        return self

    def add_extra(self, name: str, column: str, unit: Optional[str] = None,
                  meaning: Optional[str] = None) -> "Importer":
        """Read the tables' column as the grid's extra quantity name (hrt_import_add_extra)."""
        e, pe = new_error()
        check(lib.hrt_import_add_extra(self._handle, name.encode(), column.encode(),
                                       None if unit is None else unit.encode(),
                                       None if meaning is None else meaning.encode(), pe), e, "hrt_import_add_extra")
        return self

    @property
    def n_extra(self) -> int:
        """Number of extra quantities the import reads (hrt_import_n_extra)."""
        return lib.hrt_import_n_extra(self._handle)

    def map_file(self, path) -> "Importer":
        """hrt_import_map() on a mapping file's contents (messages give file:line)."""
        e, pe = new_error()
        check(lib.hrt_import_map_file(self._handle, _u.path(path), pe), e, "hrt_import_map_file")
        return self

    def set_route_boundaries(self, z: Optional[float], mass_msun) -> "Importer":
        """Route-boundary masses (Msun) of metallicity z (None: every Z without its own setting)."""
        m = _f8(mass_msun, "mass_msun", "mass")
        e, pe = new_error()
        zz = float("nan") if z is None else _u.value(z, "fraction", "z")
        check(lib.hrt_import_set_route_boundaries(self._handle, zz, m.size, m.ctypes.data, pe), e,
              "hrt_import_set_route_boundaries")
        return self

    def add_file(self, path, z: Optional[float] = None) -> "Importer":
        """Add a track file; z its metal mass fraction, or None to take it from the map, the pattern or a column."""
        e, pe = new_error()
        zz = float("nan") if z is None else _u.value(z, "fraction", "z")
        check(lib.hrt_import_add_file(self._handle, _u.path(path), zz, pe), e, "hrt_import_add_file")
        return self

    @property
    def routes(self) -> List[RouteSpec]:
        """The import's route layouts (names and keypoints; segment counts not reported by the library: empty)."""
        h = self._handle
        return [RouteSpec(text(lib.hrt_import_route_name(h, r)),
                          tuple(text(lib.hrt_import_keypoint_name(h, r, k))
                                for k in range(lib.hrt_import_route_n_keypoints(h, r))), ())
                for r in range(lib.hrt_import_n_routes(h))]

    def run(self, out_path=None) -> ImportReport:
        """Read every file, find keypoints and routes, resample and write the grid to out_path
        (None: check only) (hrt_import_run).  Returns the ImportReport; on failure raises the
        HrtrailError with the first problem, the report attached as exc.report."""
        e, pe = new_error()
        rc = lib.hrt_import_run(self._handle, None if out_path is None else _u.path(out_path), pe)
        rep = ImportReport(self)
        try:
            check(rc, e, "hrt_import_run")
        except Exception as exc:
            exc.report = rep
            raise
        return rep


_ACC_Q = ("log_l", "log_teff", "log_age")


def _accuracy_record(grid, r) -> dict:
    """One hrt_accuracy_row as a flat dict, keyed as 'hrtrail grid accuracy --csv' names the columns."""
    from .enums import Interp, Phase
    rec = {"interp": Interp(r.interp).key, "route": grid.routes[r.route], "phase": Phase(r.phase).key,
           "n_points": int(r.n_points), "n_tracks": int(r.n_tracks)}
    for q, name in enumerate(_ACC_Q):
        rec[name + "_median_dex"] = r.median[q]
        rec[name + "_p95_dex"] = r.p95[q]
        rec[name + "_max_dex"] = r.max[q]
        rec[name + "_worst_mass_msun"] = r.worst_mass_msun[q]
        rec[name + "_worst_z"] = r.worst_z[q]
        rec[name + "_worst_eep"] = int(r.worst_eep[q])
    rec["wd_mass_max_msun"] = r.wd_mass_max_msun
    return rec


def accuracy(grid, interp=None, threads: int = 0, progress: Optional[Callable[[int, int], None]] = None,
             z=None, store: bool = False, across_z: bool = False) -> List[dict]:
    """Leave-one-out interpolation accuracy of a grid (hrt_accuracy_run).

    Each interior track of each route is dropped in turn, its metallicity
    group rebuilt without it by the library's builder, and the track
    interpolated from the rest.  Returns one dict per interpolation type,
    route and phase: n_points, n_tracks, and for log_l, log_teff and log_age
    the median, 95th percentile (nearest rank) and maximum of |error| in dex
    (keys such as 'log_l_p95_dex') with the worst track (initial mass, Z,
    EEP), plus the route's worst white-dwarf mass error (Msun, NaN if none).

    grid: a Grid (or a path, opened for the run); interp: a type ('steffen',
    'linear', 'cspline', 'akima' or an Interp), None for all four; threads:
    0 for every core; progress: called as progress(done, total) after each
    dropped track (from a worker thread; exceptions are ignored); z: one
    metallicity group of the grid only (None: every group); store: write the
    run's error field into the grid's file (hrt_accuracy_store: the group
    accuracy/ of FORMAT.md, which Grid.interp_error reads; reopen the grid to
    see it); across_z: measure across metallicity instead
    (hrt_accuracy_set_across_z): each interior metallicity group dropped, the
    grid rebuilt from the others and each of its tracks interpolated at its
    own mass and Z; the same rows; with store, written to accuracy/across_z/
    (store a mass-direction run first), which Grid.interp_error adds between
    metallicity groups; progress then counts groups.
    """
    from .core import Grid
    own = not isinstance(grid, Grid)
    g = Grid(grid) if own else grid
    h = ctypes.c_void_p()
    try:
        e, pe = new_error()
        check(lib.hrt_accuracy_new(ctypes.byref(h), pe), e, "hrt_accuracy_new")
        code = -1
        if interp is not None:
            from .enums import as_interp
            code = int(as_interp(interp))
        e, pe = new_error()
        check(lib.hrt_accuracy_set_interp(h, code, pe), e, "hrt_accuracy_set_interp")
        e, pe = new_error()
        check(lib.hrt_accuracy_set_threads(h, int(threads), pe), e, "hrt_accuracy_set_threads")
        e, pe = new_error()
        zv = float("nan") if z is None else _u.value(z, "fraction", "z")
        check(lib.hrt_accuracy_set_z(h, zv, pe), e, "hrt_accuracy_set_z")
        e, pe = new_error()
        check(lib.hrt_accuracy_set_across_z(h, 1 if across_z else 0, pe), e, "hrt_accuracy_set_across_z")
        cb = None
        if progress is not None:
            def _cb(user, done, total):
                try:
                    progress(done, total)
                except Exception:  # an exception cannot cross the C call: the run goes on
                    pass
            cb = ACCURACY_PROGRESS_FN(_cb)
            check(lib.hrt_accuracy_set_progress(h, cb, None), None, "hrt_accuracy_set_progress")
        e, pe = new_error()
        check(lib.hrt_accuracy_run(h, g._handle, pe), e, "hrt_accuracy_run")
        rows = []
        for i in range(lib.hrt_accuracy_n_rows(h)):
            r = HrtAccuracyRow()
            check(lib.hrt_accuracy_row_at(h, i, ctypes.byref(r)), None, "hrt_accuracy_row_at")
            rows.append(_accuracy_record(g, r))
        if store:
            e, pe = new_error()
            check(lib.hrt_accuracy_store(h, _u.path(g.path), pe), e, "hrt_accuracy_store")
        return rows
    finally:
        lib.hrt_accuracy_free(h)
        if own:
            g.close()
