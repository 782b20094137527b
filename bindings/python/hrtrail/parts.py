"""Populations over several processes: parts (hrt_pop_part_*) and catalogues (hrt_pop_catalogue_*).

A Part is a population, its epochs and HR binning, the chunks done and their
summaries, and a note.  Workers (multiprocessing, MPI ranks, batch jobs) each
run some chunks into a part; the parts travel as bytes (pickle, files) and
merge exactly, in any order, into the summaries one process running every
chunk gives; parts of another population, epoch, binning or note, or with a
chunk in common, are refused (InvalidInputError).  The bytes are the ones
`hrtrail population --save-summary` writes, so the command and Python read each
other's parts; the command's note is "grid PATH\ninterp NAME" (the grid as it was
named, and the interpolation), and only parts of equal notes merge.

    pop = Population(10**6, seed=3)
    with multiprocessing.Pool(4) as pool:
        parts = pool.map(work, [(pop, k, 4) for k in range(4)])   # each: Part(...).run(grid, chunks)
    whole = merge_parts(parts)                                    # == Part(pop, ages).run(grid)
    whole.save("pop.part")                                        # hrtrail population merge pop.part

A Catalogue writes stars (one row per star and epoch) to HDF5 or CSV.
"""
import ctypes
import numbers
from typing import Iterable, List, Optional, Sequence, Tuple

from ._clib import HrtPopSpec, lib, text
from .errors import InvalidInputError, check, new_error
from .enums import Status
from .population import DEFAULT_HR, HRBinning, Population, Summary, _hr_c
from . import units as _u

try:
    import numpy as _np
except ImportError:
    _np = None


def _whole(v, what):
    if isinstance(v, bool) or not isinstance(v, numbers.Integral) or not 0 <= v < 2 ** 64:
        raise InvalidInputError(Status.INVALID, "%s: a whole number in [0, 2^64) expected, not %r" % (what, v))
    return int(v)


class Part:
    """Some chunks of a population and their summaries (hrt_pop_part).

    Part(population, ages_yr, hr=DEFAULT_HR, note="")   an empty part: no chunk done
    Part.from_bytes(b), Part.load(path)                 a saved part, every field checked
    """

    def __init__(self, population: Population, ages_yr, hr: Optional[HRBinning] = DEFAULT_HR, note: str = ""):
        self._h = None
        if not isinstance(population, Population):
            raise InvalidInputError(Status.INVALID, "population: a Population expected, not %r" % (population,))
        ages = _np.ascontiguousarray(_u.array(ages_yr, "age", "ages_yr").ravel(), dtype=float)
        c_hr = _hr_c(hr)
        h = ctypes.c_void_p()
        e, pe = new_error()
        check(lib.hrt_pop_part_new(ctypes.byref(population._c), ages.size, ages.ctypes.data,
                                   None if c_hr is None else ctypes.byref(c_hr), note.encode(), ctypes.byref(h), pe),
              e, "hrt_pop_part_new")
        self._h = h

    @classmethod
    def from_bytes(cls, b: bytes) -> "Part":
        """A part from bytes of to_bytes() or a file of hrtrail population --save-summary (hrt_pop_part_load)."""
        p = cls.__new__(cls)
        p._h = None
        h = ctypes.c_void_p()
        buf = bytes(b)
        e, pe = new_error()
        check(lib.hrt_pop_part_load(buf, len(buf), ctypes.byref(h), pe), e, "hrt_pop_part_load")
        p._h = h
        return p

    @classmethod
    def load(cls, path: str) -> "Part":
        """A part from a file (hrtrail population --save-summary, or save())."""
        with open(path, "rb") as f:
            return cls.from_bytes(f.read())

    def to_bytes(self) -> bytes:
        """The part as versioned, checksummed bytes (hrt_pop_part_save)."""
        n = ctypes.c_size_t()
        e, pe = new_error()
        lib.hrt_pop_part_save(self._h, None, 0, ctypes.byref(n), pe)
        buf = ctypes.create_string_buffer(n.value)
        check(lib.hrt_pop_part_save(self._h, buf, n.value, ctypes.byref(n), pe), e, "hrt_pop_part_save")
        return buf.raw[:n.value]

    def save(self, path: str) -> None:
        """Write to_bytes() to a file that hrtrail population merge reads."""
        with open(path, "wb") as f:
            f.write(self.to_bytes())

    def __reduce__(self):
        return (Part.from_bytes, (self.to_bytes(),))

    def __del__(self):
        if getattr(self, "_h", None):
            lib.hrt_pop_part_free(self._h)
            self._h = None

    def run(self, grid, chunks=None, threads: int = 0) -> "Part":
        """Run chunks (a range with step 1 or (first, count); default all) and add them (hrt_pop_part_run); returns self.

        InvalidInputError if a chunk is already in the part (the part is then unchanged)."""
        if chunks is None:
            first, count = 0, self.n_chunks
        elif isinstance(chunks, range):
            if chunks.step != 1:
                raise InvalidInputError(Status.INVALID, "chunks: a range with step 1 expected")
            first, count = chunks.start, max(0, len(chunks))
        else:
            first, count = chunks
        e, pe = new_error()
        check(lib.hrt_pop_part_run(grid._handle, self._h, _whole(first, "first chunk"), _whole(count, "chunk count"),
                                   _whole(threads, "threads"), pe), e, "hrt_pop_part_run")
        return self

    def add(self, chunks: Tuple[int, int], summaries: Sequence[Summary]) -> "Part":
        """Add summaries made elsewhere (Population.run) of chunks (first, count) (hrt_pop_part_add); returns self."""
        from ._clib import HrtPopSummary
        if len(summaries) != self.n_ages:
            raise InvalidInputError(Status.INVALID, "%d summaries for a part of %d epochs" % (len(summaries), self.n_ages))
        arr = (HrtPopSummary * len(summaries))()
        for k, s in enumerate(summaries):
            ctypes.memmove(ctypes.byref(arr[k]), ctypes.byref(s._c), ctypes.sizeof(HrtPopSummary))
        e, pe = new_error()
        check(lib.hrt_pop_part_add(self._h, _whole(chunks[0], "first chunk"), _whole(chunks[1], "chunk count"), arr, pe),
              e, "hrt_pop_part_add")
        return self

    def merge(self, other: "Part") -> "Part":
        """Add other's chunks and summaries, exactly (hrt_pop_part_merge); returns self.

        InvalidInputError (self unchanged) for another population, epochs, binning or note, or a chunk in both."""
        e, pe = new_error()
        check(lib.hrt_pop_part_merge(self._h, other._h, pe), e, "hrt_pop_part_merge")
        return self

    @property
    def n_ages(self) -> int:
        """Epochs of the part (one summary each)."""
        return lib.hrt_pop_part_n_ages(self._h)

    @property
    def n_chunks(self) -> int:
        """Chunks of the whole population."""
        return lib.hrt_pop_n_chunks(lib.hrt_pop_part_spec(self._h))

    @property
    def n_stars(self) -> int:
        """Stars of the whole population."""
        return HrtPopSpec.from_address(lib.hrt_pop_part_spec(self._h)).n_stars

    @property
    def seed(self) -> int:
        """Seed of the population's draws."""
        return HrtPopSpec.from_address(lib.hrt_pop_part_spec(self._h)).seed

    @property
    def note(self) -> str:
        """The note given when the part was made."""
        return text(lib.hrt_pop_part_note(self._h))

    @property
    def chunks(self) -> List[Tuple[int, int]]:
        """The chunks done as sorted runs (first, count)."""
        out = []
        for i in range(lib.hrt_pop_part_n_ranges(self._h)):
            f, k = ctypes.c_uint64(), ctypes.c_uint64()
            check(lib.hrt_pop_part_range(self._h, i, ctypes.byref(f), ctypes.byref(k)), None, "hrt_pop_part_range")
            out.append((f.value, k.value))
        return out

    @property
    def chunks_done(self) -> int:
        """Number of chunks done."""
        return lib.hrt_pop_part_chunks_done(self._h)

    @property
    def complete(self) -> bool:
        """Every chunk of the population done."""
        return bool(lib.hrt_pop_part_complete(self._h))

    def summaries(self) -> List[Summary]:
        """Copies of the summaries, one per epoch."""
        from ._clib import HrtPopSummary
        out = []
        for i in range(self.n_ages):
            p = lib.hrt_pop_part_summary(self._h, i)
            out.append(Summary.from_bytes(ctypes.string_at(p, ctypes.sizeof(HrtPopSummary))))
        return out

    def __repr__(self):
        return "<hrtrail.Part: %d of %d chunks, %d epochs>" % (self.chunks_done, self.n_chunks, self.n_ages)


def merge_parts(parts: Iterable[Part]) -> Part:
    """One part of many, merged exactly in any order (the first is copied, not changed)."""
    it = iter(parts)
    out = Part.from_bytes(next(it).to_bytes())
    for p in it:
        out.merge(p)
    return out


class Catalogue:
    """Stars written to a file, one row per star and epoch (hrt_pop_catalogue): HDF5 (.h5, .hdf5) or CSV.

    Catalogue(path)    created (truncated); use as a context manager, or close()
    add(population_age_yr, star, birth_yr, states)   star indices, birth times (yr) and STATE_DTYPE states
    """

    def __init__(self, path: str):
        self._h = None
        fmt = 1 if path.endswith((".h5", ".hdf5")) else 0 if path.endswith(".csv") else -1
        if fmt < 0:
            raise InvalidInputError(Status.INVALID, "catalogue %r: name a .h5, .hdf5 or .csv file" % (path,))
        h = ctypes.c_void_p()
        e, pe = new_error()
        check(lib.hrt_pop_catalogue_open(path.encode(), fmt, ctypes.byref(h), pe), e, "hrt_pop_catalogue_open")
        self._h = h
        self.rows = 0

    def add(self, population_age_yr: float, star, birth_yr, states) -> None:
        """Append stars evaluated at one epoch: their indices in the population, birth times (yr) and states."""
        from .core import STATE_DTYPE
        st = _np.ascontiguousarray(states)
        ids = _np.ascontiguousarray(star, dtype=_np.uint64)
        bt = _np.ascontiguousarray(birth_yr, dtype=float)
        if st.dtype != STATE_DTYPE or not ids.size == bt.size == st.size:
            raise InvalidInputError(Status.INVALID, "states (STATE_DTYPE), star and birth_yr of one length expected")
        e, pe = new_error()
        check(lib.hrt_pop_catalogue_add(self._h, float(population_age_yr), st.size, ids.ctypes.data, bt.ctypes.data,
                                        st.ctypes.data, pe), e, "hrt_pop_catalogue_add")

    def close(self) -> int:
        """Write what is buffered and close; returns the rows written."""
        if self._h:
            n = ctypes.c_uint64()
            e, pe = new_error()
            h, self._h = self._h, None
            check(lib.hrt_pop_catalogue_close(h, ctypes.byref(n), pe), e, "hrt_pop_catalogue_close")
            self.rows = n.value
        return self.rows

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def __del__(self):
        if getattr(self, "_h", None):
            lib.hrt_pop_catalogue_close(self._h, None, None)
            self._h = None
