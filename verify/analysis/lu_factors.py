"""What the analyses read from a sparse LU factor besides its solves: U's diagonal and the fill.

scipy's SuperLU object offers both only through its ``L`` and ``U`` attributes, which build CSC
copies of both factors (the diagonal of U and the whole of L's supernodes are copied, explicit
zeros dropped) and keep them on the factor for as long as it lives: 0.43 s per factor, and
several hundred MB, on the 10^5-member 3D grid with top chords; 135 MB held on the kept factor of
the 10^5-member determinate grid (which is why that one was read in a child process).

SuperLU itself stores U's diagonal in L's supernodes (a supernode's first rows are its own
columns, in order), so both figures can be read from the factor's own arrays without a copy:
U_jj is L's value at row j of column j, and the fill is every nonzero value stored in L's
supernodes and in U's columns plus L's unit diagonal, which is how the CSC copies count
(scipy/sparse/linalg/_dsolve/_superluobject.c, LU_to_csc). The arrays are reached through the
layout of scipy's SuperLU object and SuperLU's own structures (SuperLUObject in
_superluobject.h; SuperMatrix, SCformat and NCformat in SuperLU's supermatrix.h). That layout is
not a public interface, so every reading is checked first against what the object does expose
(its size, shape, nnz and row permutation, the kinds of both factors, the row numbers of every
diagonal entry); where anything differs, or on another Python, the copies are read as before.
The values are the same floats either way, so the figures are bit for bit scipy's
(tests/test_analysis_scale_lu_factors.py holds them to lu.U and lu.L on random matrices).
"""

from __future__ import annotations

import ctypes
import platform
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

# SuperLUObject (scipy _superluobject.h): PyObject_HEAD, npy_intp m, n, SuperMatrix L, U,
# int *perm_r, *perm_c, three object pointers, int type: 144 bytes on a 64-bit CPython.
_OBJECT_SIZE = 144
_M, _N, _L, _U, _PERM_R = 16, 24, 32, 64, 96
# SuperMatrix: Stype, Dtype, Mtype, nrow, ncol (4-byte ints), then void *Store at 24.
_STORE = 24
_SLU_NC, _SLU_SC = 0, 3  # Stype_t
_SLU_D = 1  # Dtype_t: double
_SLU_TRLU, _SLU_TRU = 1, 4  # Mtype_t
# SCformat: int nnz, nsuper; void *nzval; int *nzval_colptr, *rowind, *rowind_colptr,
# *col_to_sup, *sup_to_col. NCformat: int nnz; void *nzval; int *rowind, *colptr.
_SC_NZVAL, _SC_NZVAL_COLPTR, _SC_ROWIND, _SC_ROWIND_COLPTR = 8, 16, 24, 32
_SC_COL_TO_SUP, _SC_SUP_TO_COL = 40, 48
_NC_NZVAL, _NC_COLPTR = 8, 24


@dataclass(frozen=True)
class _Storage:
    """Views of one factor's arrays (valid while the factor lives; read, never kept)."""

    diagonal: np.ndarray  # U_jj, j = 0..n-1
    l_values: np.ndarray  # every value in L's supernodes, column after column
    u_values: np.ndarray  # every value in U's columns (outside the supernodes)


class _Unexpected(Exception):
    """The factor is not laid out as checked for: read the copies instead."""


def _int(address: int) -> int:
    return ctypes.c_int32.from_address(address).value


def _pointer(address: int) -> int:
    return ctypes.c_void_p.from_address(address).value or 0


def _array(address: int, count: int, kind: Any) -> np.ndarray:
    """A view of `count` C values of `kind` at `address` (no copy)."""
    if count == 0:
        return np.zeros(0, dtype=np.dtype(kind))
    if not address or count < 0:
        raise _Unexpected
    return np.ctypeslib.as_array(ctypes.cast(address, ctypes.POINTER(kind)), shape=(count,))


def _storage(lu: spla.SuperLU) -> _Storage | None:
    """The factor's own arrays, or None where its layout is not the one checked for."""
    try:
        return _read(lu)
    except (_Unexpected, IndexError, ValueError):
        return None


def _read(lu: spla.SuperLU) -> _Storage | None:
    n = int(lu.shape[0])
    if (
        platform.python_implementation() != "CPython"
        or ctypes.sizeof(ctypes.c_void_p) != 8
        or type(lu).__basicsize__ != _OBJECT_SIZE
        or tuple(lu.shape) != (n, n)
        or n == 0
    ):
        return None
    base = id(lu)  # CPython: the object's address
    if (
        ctypes.c_int64.from_address(base + _M).value != n
        or ctypes.c_int64.from_address(base + _N).value != n
    ):
        return None
    kinds = [tuple(_int(base + part + 4 * k) for k in range(5)) for part in (_L, _U)]
    if kinds != [(_SLU_SC, _SLU_D, _SLU_TRLU, n, n), (_SLU_NC, _SLU_D, _SLU_TRU, n, n)]:
        return None
    l_store, u_store = _pointer(base + _L + _STORE), _pointer(base + _U + _STORE)
    perm_r = _pointer(base + _PERM_R)
    if not (l_store and u_store and perm_r):
        return None
    if _int(l_store) + _int(u_store) != lu.nnz:
        return None
    if not np.array_equal(_array(perm_r, n, ctypes.c_int32), lu.perm_r):
        return None
    nsuper = _int(l_store + 4) + 1
    if not 0 < nsuper <= n:
        return None
    sup_to_col = _array(_pointer(l_store + _SC_SUP_TO_COL), nsuper + 1, ctypes.c_int32)
    col_to_sup = _array(_pointer(l_store + _SC_COL_TO_SUP), n, ctypes.c_int32)
    nzval_colptr = _array(_pointer(l_store + _SC_NZVAL_COLPTR), n + 1, ctypes.c_int32)
    rowind_colptr = _array(_pointer(l_store + _SC_ROWIND_COLPTR), n + 1, ctypes.c_int32)
    u_colptr = _array(_pointer(u_store + _NC_COLPTR), n + 1, ctypes.c_int32)
    if (
        sup_to_col[0] != 0
        or sup_to_col[-1] != n
        or col_to_sup.min() < 0
        or col_to_sup.max() >= nsuper
        or nzval_colptr[0] != 0
        or rowind_colptr[0] != 0
        or u_colptr[0] != 0
        or np.any(np.diff(nzval_colptr) < 0)
        or np.any(np.diff(rowind_colptr) < 0)
        or np.any(np.diff(u_colptr) < 0)
    ):
        return None
    columns = np.arange(n)
    first = sup_to_col[col_to_sup]  # each column's supernode's first column
    if np.any(first > columns):
        return None
    # Each column holds a value for every row of its supernode, one after the other.
    rows = rowind_colptr[first + 1] - rowind_colptr[first]
    if not np.array_equal(np.diff(nzval_colptr), rows):
        return None
    rowind = _array(_pointer(l_store + _SC_ROWIND), int(rowind_colptr[n]), ctypes.c_int32)
    offset = columns - first
    if np.any(offset >= rows) or not np.array_equal(rowind[rowind_colptr[first] + offset], columns):
        return None  # the diagonal is not where SuperLU puts it
    l_values = _array(_pointer(l_store + _SC_NZVAL), int(nzval_colptr[n]), ctypes.c_double)
    u_values = _array(_pointer(u_store + _NC_NZVAL), int(u_colptr[n]), ctypes.c_double)
    return _Storage(l_values[nzval_colptr[:n] + offset], l_values, u_values)


def u_diagonal(lu: spla.SuperLU) -> np.ndarray:
    """U's diagonal, as ``lu.U.diagonal()`` gives it (a copy the caller may keep)."""
    diagonal = u_diagonal_in_place(lu)
    return diagonal if diagonal is not None else np.asarray(lu.U.diagonal())


def u_diagonal_in_place(lu: spla.SuperLU) -> np.ndarray | None:
    """U's diagonal read from the factor's own storage (a copy the caller may keep), or None
    where that cannot be done (the factor then gives it only through its copies)."""
    storage = _storage(lu)
    return None if storage is None else storage.diagonal.copy()


def factor_fill(lu: spla.SuperLU) -> int:
    """The nonzeros of both factors, as ``lu.L.nnz + lu.U.nnz`` counts them."""
    storage = _storage(lu)
    if storage is None:
        return int(lu.L.nnz + lu.U.nnz)
    n = int(lu.shape[0])
    return int(np.count_nonzero(storage.l_values) + np.count_nonzero(storage.u_values) + n)


def stored_entries(lu: spla.SuperLU) -> int | None:
    """How many entries the factors' storage holds (zeros of the supernodes included): the
    work of a triangular solve with them, read without a copy; None where the storage cannot
    be read in place."""
    storage = _storage(lu)
    return None if storage is None else int(storage.l_values.size + storage.u_values.size)


def splu_checked(A: sp.csc_matrix, **options: Any) -> spla.SuperLU:
    """spla.splu(A, **options), refusing a square matrix with an empty row or column the way
    SuperLU refuses an exactly singular one (RuntimeError), without calling it: on such matrices
    scipy 1.17's SuperLU was seen handing BLAS illegal arguments (reported on stdout) and, in a
    test's random matrices, crashing the process. A joint direction nothing acts on (a joint held
    only by two collinear chords) gives A such a row."""
    if A.shape[0] == A.shape[1] and A.shape[0]:
        # Empty as numbers: a stored zero (AnalysisRun.lu_matrix keeps some) fills nothing.
        acting = A.data != 0
        empty = (np.diff(A.indptr) == 0).any()
        if not empty:  # every column holds an entry: each has a place to reduce from
            empty = not np.logical_or.reduceat(acting, A.indptr[:-1]).all()
        if empty or (np.bincount(A.indices[acting], minlength=A.shape[0]) == 0).any():
            raise RuntimeError("Factor is exactly singular (an empty row or column)")
    return spla.splu(A, **options)
