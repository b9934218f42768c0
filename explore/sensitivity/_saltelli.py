"""SALib's Sobol' estimators and bootstrap, computed as weighted sums in bounded memory.

``SALib.analyze.sobol.analyze`` draws one matrix of resample row numbers
``r`` of shape (N, R) and, for every parameter, gathers ``A[r]``, ``B[r]``
and ``AB[r, j]``: several (N, R) float matrices per parameter (at N = 2^18,
R = 200, 420 MB each; the analysis peaked at 4.6 GB and took 85 s with the
convergence levels). Every resampled estimator is a mean over the chosen
rows of a per-row product, so a resample is a count of how often it chose
each row (a bincount of its column of ``r``) and its estimators are one row
of ``counts @ products``: a matrix product over blocks of resamples, with
the products of each row computed once.

What is kept from SALib, so that results match its analysis:

* the outputs are centred and scaled by their own mean and standard
  deviation first;
* the point estimates use SALib's arithmetic operation for operation, so
  they are bit-for-bit equal to its ``S1``, ``ST`` and ``S2``: first order
  of Saltelli et al. (2010) [1]_, total order of Jansen (1999) [2]_ (as
  given in [1]_), second order of Saltelli (2002) [3]_;
* the resamples are SALib's: ``numpy.random.default_rng(seed).integers(N,
  size=(N, R))``, column b being resample b. The matrix is drawn in blocks
  of rows from the same generator (one stream, so the same numbers) and
  only the columns of the resamples in hand are kept;
* the half-width is ``norm.ppf(0.5 + level / 2) * std(ddof=1)`` of the
  resampled estimates, 0 when the resampled A and B outputs are all equal.

The resampled estimates differ from SALib's only by summation order (a
weighted sum over rows instead of a mean over chosen rows, and the variance
as E[y^2] - E[y]^2 of outputs already centred): about 1e-14 relative.

References
----------
.. [1] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M.,
   Tarantola, S. (2010). Variance based sensitivity analysis of model
   output. Design and estimator for the total sensitivity index. Computer
   Physics Communications 181(2), 259-270.
.. [2] Jansen, M. J. W. (1999). Analysis of variance designs for model
   output. Computer Physics Communications 117(1-2), 35-43.
.. [3] Saltelli, A. (2002). Making best use of model evaluations to compute
   sensitivity indices. Computer Physics Communications 145(2), 280-297.
"""
from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np

#: Bytes of resample row numbers held at once (uint32, one row per
#: resample). Above it the generator's stream is drawn again for each group
#: of resamples: bounded memory for some repeated drawing (two passes at
#: N = 2^18 with 200 resamples).
INDEX_BYTES = 128 * 2 ** 20

#: Bytes of one block of resample counts as float64 (the left operand of the
#: matrix product).
COUNT_BYTES = 16 * 2 ** 20

#: Bytes of one block of drawn row numbers (rows of SALib's r matrix).
DRAW_BYTES = 8 * 2 ** 20

#: Threads for drawing, counting and multiplying.
WORKERS = max(1, min(2, os.cpu_count() or 1))

# SALib's threshold for 'constant' outputs and zero variance
_EPS = np.finfo(float).eps


@dataclass(frozen=True)
class Split:
    """Centred, scaled outputs in Saltelli's groups, as SALib separates them.

    Attributes
    ----------
    a, b : numpy.ndarray
        Outputs at the A and B rows, shape (N,). [-]
    ab : list of numpy.ndarray
        ``ab[j]``: outputs at A with column j from B, shape (N,) each. [-]
    ba : list of numpy.ndarray or None
        ``ba[j]``: outputs at B with column j from A (second order only). [-]
    """

    a: np.ndarray
    b: np.ndarray
    ab: list
    ba: list | None

    @property
    def base(self):
        """Base samples N. [-]"""
        return self.a.size

    @property
    def dimension(self):
        """Parameters D. [-]"""
        return len(self.ab)


def split(y, dimension, second_order):
    """Centre and scale y as SALib does, and cut it into A, B, AB (and BA).

    Parameters
    ----------
    y : numpy.ndarray
        One output per plan row, SALib's layout: per base sample A, the
        AB_j rows, (the BA_j rows,) B. [unit of the output]
    dimension : int
        Parameters D. [-]
    second_order : bool
        Whether the layout has the BA_j rows.

    Returns
    -------
    Split
    """
    y = (y - y.mean()) / y.std()  # SALib's normalisation, same operations
    step = 2 * dimension + 2 if second_order else dimension + 2
    ab = [y[j + 1::step] for j in range(dimension)]
    ba = [y[j + 1 + dimension::step] for j in range(dimension)] if second_order else None
    return Split(y[0::step], y[step - 1::step], ab, ba)


def _constant(parts):
    # SALib's test, on np.r_[A, B] (all resamples together for the intervals;
    # with R >= 2 resamples of N rows every row is drawn but with probability
    # about N exp(-R), so the full outputs stand for the drawn ones)
    return max(parts.a.max(), parts.b.max()) - min(parts.a.min(), parts.b.min()) <= _EPS


def point_estimates(parts):
    """S1, ST and S2 with SALib's arithmetic (bit-for-bit its values).

    Parameters
    ----------
    parts : Split

    Returns
    -------
    dict
        ``S1``, ``ST``: shape (D,); ``S2``: shape (D, D), NaN except above
        the diagonal, or None without second order. [-]
    """
    d = parts.dimension
    s1, st = np.zeros(d), np.zeros(d)
    s2 = None if parts.ba is None else np.full((d, d), np.nan)
    if _constant(parts):
        if s2 is not None:
            s2[np.triu_indices(d, 1)] = 0.0
        return {"S1": s1, "ST": st, "S2": s2}
    a, b = parts.a, parts.b
    variance = np.var(np.r_[a, b])
    usable = variance > _EPS

    def share(mean):
        return mean / variance if usable else 0.0

    for j in range(d):
        s1[j] = share(np.mean(b * (parts.ab[j] - a)))
        st[j] = share(0.5 * np.mean((a - parts.ab[j]) ** 2))
    if s2 is not None:
        for j in range(d):
            for k in range(j + 1, d):
                s2[j, k] = share(np.mean(parts.ba[j] * parts.ab[k] - a * b)) - s1[j] - s1[k]
    return {"S1": s1, "ST": st, "S2": s2}


def _products(parts):
    """Per-row terms whose resample sums give every resampled estimator.

    Columns: A + B and A^2 + B^2 (the variance of np.r_[A, B]), then
    B (AB_j - A) for each j (first order), (A - AB_j)^2 for each j (total),
    and BA_j AB_k - A B for each pair j < k (second order). Shape (N, K).
    """
    a, b = parts.a, parts.b
    columns = [a + b, a * a + b * b]
    columns += [b * (ab - a) for ab in parts.ab]
    columns += [(a - ab) ** 2 for ab in parts.ab]
    if parts.ba is not None:
        d = parts.dimension
        columns += [parts.ba[j] * parts.ab[k] - a * b for j in range(d) for k in range(j + 1, d)]
    return np.column_stack(columns)


def _draw_rows(seed, base, num_resamples, rows, columns, chosen):
    """Rows ``rows`` of SALib's resample matrix, columns ``columns``, into ``chosen`` transposed.

    The generator is moved to the first row's place in the stream: each
    number drawn takes one 32-bit half of a 64-bit PCG64 output (below
    2^32, with no rejection when N is a power of two, see
    :func:`_can_jump`), so row i starts i R / 2 outputs in when i R is even.
    """
    generator = np.random.default_rng(seed)
    generator.bit_generator.advance(rows.start * num_resamples // 2)
    step = max(2, DRAW_BYTES // (4 * num_resamples)) // 2 * 2
    for row in range(rows.start, rows.stop, step):
        drawn = generator.integers(base, size=(min(step, rows.stop - row), num_resamples), dtype=np.uint32)
        chosen[:, row:row + drawn.shape[0]] = drawn[:, columns].T


def _can_jump(base):
    # Lemire's bounded draw (NumPy's Generator.integers) rejects a 32-bit
    # number only below (2^32 - N) mod N, which is 0 for N a power of two:
    # then every number drawn is exactly one 32-bit half and a row's place
    # in the stream is known
    return base & (base - 1) == 0 and base <= 2 ** 32


def _row_ranges(base, workers):
    """Up to ``workers`` ranges of rows, each starting on an even row."""
    if workers < 2 or not _can_jump(base) or base < 4:
        return [range(0, base)]
    cuts = [base * w // workers // 2 * 2 for w in range(workers)] + [base]
    return [range(a, b) for a, b in zip(cuts, cuts[1:]) if b > a]


def _sums(chosen, products, out):
    """``out[b] = counts of chosen[b] @ products``, one count buffer reused."""
    base = products.shape[0]
    per_block = max(1, min(len(chosen), COUNT_BYTES // (8 * base)))
    counts = np.empty((per_block, base))
    for first in range(0, len(chosen), per_block):
        block = chosen[first:first + per_block]
        for i, rows in enumerate(block):
            counts[i] = np.bincount(rows, minlength=base)
        np.matmul(counts[:len(block)], products, out=out[first:first + len(block)])


def resample_sums(products, num_resamples, seed, workers=WORKERS):
    """For each of SALib's resamples, the sum of ``products`` over the rows it chose.

    Parameters
    ----------
    products : numpy.ndarray
        Per-row terms, shape (N, K), C order. [-]
    num_resamples : int
        Resamples R. [-]
    seed : int
        SALib's bootstrap seed (>= 1).
    workers : int, optional
        Threads. [-]

    Returns
    -------
    numpy.ndarray
        Shape (R, K): row b is sum over the N rows resample b drew (with
        repeats) of their products. [-]

    Notes
    -----
    SALib draws ``default_rng(seed).integers(N, size=(N, R))`` in one go;
    column b is resample b. The same generator drawing the same matrix in
    blocks of rows gives the same numbers (one stream, C order), uint32
    the same values as the default int64. Only the columns of the
    resamples in hand are kept, transposed so that each resample's rows
    are contiguous for ``bincount``; when all R would take more than
    :data:`INDEX_BYTES` the stream is drawn again for each group of
    resamples. Threads draw separate ranges of rows (the generator jumped
    ahead, see :func:`_can_jump`), then count and multiply separate
    resamples: NumPy's generator and matmul release the GIL (the bincounts
    are a small share: about 0.1 s of CPU for 200 resamples at N = 2^18).
    """
    base = products.shape[0]
    per_group = max(1, min(num_resamples, INDEX_BYTES // (4 * base)))
    chosen = np.empty((per_group, base), dtype=np.uint32)
    sums = np.empty((num_resamples, products.shape[1]))
    from joblib import Parallel, delayed
    with Parallel(n_jobs=workers, prefer="threads") as parallel:
        for start in range(0, num_resamples, per_group):
            columns = slice(start, min(num_resamples, start + per_group))
            group = chosen[:columns.stop - start]
            parallel(delayed(_draw_rows)(seed, base, num_resamples, rows, columns, group)
                     for rows in _row_ranges(base, workers))
            cuts = np.linspace(0, len(group), min(workers, len(group)) + 1).astype(int)
            parallel(delayed(_sums)(group[a:b], products, sums[start + a:start + b])
                     for a, b in zip(cuts, cuts[1:]))
    return sums


def bootstrap_estimates(parts, num_resamples, seed):
    """The resampled S1, ST (and S2) of SALib's bootstrap, one row per resample.

    Parameters
    ----------
    parts : Split
    num_resamples : int
        Resamples R. [-]
    seed : int
        SALib's bootstrap seed (>= 1).

    Returns
    -------
    dict
        ``S1``, ``ST``: shape (R, D); ``S2``: shape (R, pairs) for the pairs
        j < k in row-major order, or None. [-]
    """
    sums = resample_sums(_products(parts), num_resamples, seed)
    n, d = parts.base, parts.dimension
    mean = sums[:, 0] / (2 * n)
    variance = sums[:, 1] / (2 * n) - mean ** 2
    usable = variance > _EPS
    scale = np.where(usable, 1.0 / (n * np.where(usable, variance, 1.0)), 0.0)[:, None]
    s1 = sums[:, 2:2 + d] * scale
    st = 0.5 * sums[:, 2 + d:2 + 2 * d] * scale
    s2 = None
    if parts.ba is not None:
        j, k = np.triu_indices(d, 1)
        s2 = sums[:, 2 + 2 * d:] * scale - s1[:, j] - s1[:, k]
    return {"S1": s1, "ST": st, "S2": s2}


def analyse(y, dimension, second_order, confidence_level, num_resamples, seed):
    """What ``SALib.analyze.sobol.analyze`` returns, computed as weighted sums.

    Parameters
    ----------
    y : numpy.ndarray
        One finite output per plan row, SALib's layout. [unit of the output]
    dimension : int
        Parameters D. [-]
    second_order : bool
        Whether y holds the second-order rows.
    confidence_level : float
        In (0, 1). [-]
    num_resamples : int
        Bootstrap resamples R, >= 2. [-]
    seed : int
        Bootstrap seed, >= 1, as given to SALib.

    Returns
    -------
    dict
        ``S1``, ``S1_conf``, ``ST``, ``ST_conf`` of shape (D,) and, with
        second order, ``S2``, ``S2_conf`` of shape (D, D), NaN except above
        the diagonal: SALib's keys and shapes. [-]
    """
    parts = split(y, dimension, second_order)
    result = point_estimates(parts)
    from scipy.stats import norm
    z = norm.ppf(0.5 + confidence_level / 2)
    if _constant(parts):
        spread = {key: np.zeros(dimension) for key in ("S1", "ST")}
        spread["S2"] = np.zeros(dimension * (dimension - 1) // 2) if second_order else None
    else:
        resampled = bootstrap_estimates(parts, num_resamples, seed)
        spread = {key: None if value is None else z * value.std(axis=0, ddof=1)
                  for key, value in resampled.items()}
    out = {"S1": result["S1"], "S1_conf": spread["S1"], "ST": result["ST"], "ST_conf": spread["ST"]}
    if second_order:
        s2_conf = np.full((dimension, dimension), np.nan)
        s2_conf[np.triu_indices(dimension, 1)] = spread["S2"]
        out.update(S2=result["S2"], S2_conf=s2_conf)
    return out


def cross_sample(dimension, base, second_order, seed):
    """Saltelli's cross-sampled plan on the unit cube, as SALib's sampler makes it.

    ``SALib.sample.sobol.sample`` (scrambled, no skipped points) draws the
    same scrambled Sobol' base sequence of ``2 D`` columns, A its first
    ``D`` and B its last, and lays out per base row: A, then A with column
    j taken from B for each j, then (second order) B with column j taken
    from A, then B. It does so one number at a time in Python (2.7 s at
    N = 2^18, D = 6); here the same layout is filled with whole-array
    copies, bit for bit the same plan (tests/test_sensitivity_sobol.py
    compares the two).

    Parameters
    ----------
    dimension : int
        Parameters D.
    base : int
        Base samples N, a power of two.
    second_order : bool
        Also lay out the B-with-A rows.
    seed : int
        Seed of the scrambled sequence (``scipy.stats.qmc.Sobol``).

    Returns
    -------
    numpy.ndarray
        ``(N (D + 2), D)`` or, with second order, ``(N (2 D + 2), D)``. [-]
    """
    from scipy.stats import qmc

    d = dimension
    sequence = qmc.Sobol(d=2 * d, scramble=True, seed=seed).random(base)
    a, b = sequence[:, :d], sequence[:, d:]
    blocks = 2 * d + 2 if second_order else d + 2
    out = np.empty((base, blocks, d))
    out[:, 0] = a
    out[:, 1:d + 1] = a[:, None, :]
    columns = np.arange(d)
    out[:, 1 + columns, columns] = b
    if second_order:
        out[:, d + 1:2 * d + 1] = b[:, None, :]
        out[:, d + 1 + columns, columns] = a
    out[:, -1] = b
    return out.reshape(base * blocks, d)

