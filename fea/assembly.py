"""Vectorised assembly of element matrices and vectors into global sparse arrays.

Every element contributes a dense block; the blocks are scattered into a COO triplet list in one
numpy operation and converted to CSR, which sums duplicate entries. No Python loop runs over
elements. Units are whatever the element arrays carry (N/mm for stiffness, N for loads).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

__all__ = ["assemble_matrix", "assemble_vector", "element_dofs"]


def _index_dtype(n_dofs: int) -> type:
    """The smallest signed integer type that can index ``n_dofs`` rows."""
    return np.int32 if n_dofs < np.iinfo(np.int32).max else np.int64


def element_dofs(connectivity: np.ndarray, dofs_per_node: int) -> np.ndarray:
    """Global dof numbers of each element, node-major (node 0 dof 0, node 0 dof 1, ...).

    connectivity: (m, p) int node numbers of each element.
    dofs_per_node: number of unknowns at each node (2 for a membrane, 3 for a plate in bending).
    Returns (m, p * dofs_per_node) int, dof ``dofs_per_node * node + component``.
    """
    conn = np.asarray(connectivity, dtype=np.int64)
    if conn.ndim != 2:
        raise ValueError(f"connectivity must be (m, p), got shape {conn.shape}")
    comp = np.arange(dofs_per_node, dtype=np.int64)
    dofs = dofs_per_node * conn[:, :, None] + comp[None, None, :]
    return dofs.reshape(conn.shape[0], -1)


def assemble_matrix(ke: np.ndarray, dofs: np.ndarray, n_dofs: int) -> sp.csr_matrix:
    """Sum element matrices into a global sparse matrix.

    ke: (m, k, k) float element matrices (e.g. stiffness in N/mm).
    dofs: (m, k) int global dof number of each local row/column.
    n_dofs: size of the global matrix.
    Returns an (n_dofs, n_dofs) CSR matrix with duplicate entries summed and indices sorted.
    """
    ke = np.asarray(ke, dtype=float)
    dofs = np.asarray(dofs)
    if ke.ndim != 3 or ke.shape[1] != ke.shape[2]:
        raise ValueError(f"ke must be (m, k, k), got shape {ke.shape}")
    if dofs.shape != ke.shape[:2]:
        raise ValueError(f"dofs shape {dofs.shape} does not match ke shape {ke.shape}")
    if dofs.size and (dofs.min() < 0 or dofs.max() >= n_dofs):
        raise ValueError(f"dof numbers must lie in [0, {n_dofs}), got [{dofs.min()}, {dofs.max()}]")
    m, k = dofs.shape
    itype = _index_dtype(n_dofs)
    d = dofs.astype(itype, copy=False)
    rows = np.broadcast_to(d[:, :, None], (m, k, k)).ravel()
    cols = np.broadcast_to(d[:, None, :], (m, k, k)).ravel()
    coo = sp.coo_matrix((ke.ravel(), (rows, cols)), shape=(n_dofs, n_dofs))
    mat = coo.tocsr()
    mat.sum_duplicates()
    return mat


def assemble_vector(fe: np.ndarray, dofs: np.ndarray, n_dofs: int) -> np.ndarray:
    """Sum element vectors into a global vector.

    fe: (m, k) float element vectors (e.g. consistent loads in N).
    dofs: (m, k) int global dof numbers.
    n_dofs: length of the result.
    Returns (n_dofs,) float.
    """
    fe = np.asarray(fe, dtype=float)
    dofs = np.asarray(dofs)
    if fe.shape != dofs.shape:
        raise ValueError(f"fe shape {fe.shape} does not match dofs shape {dofs.shape}")
    if dofs.size and (dofs.min() < 0 or dofs.max() >= n_dofs):
        raise ValueError(f"dof numbers must lie in [0, {n_dofs}), got [{dofs.min()}, {dofs.max()}]")
    flat = dofs.ravel().astype(np.int64)
    return np.bincount(flat, weights=fe.ravel(), minlength=n_dofs).astype(float)
