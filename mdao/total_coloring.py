"""Total-derivative coloring of an optimization problem, from the partials its components declare.

The segments of a mission are independent except through the wing-level design variables (slot
ratio, fan rating, fan diameter) and the mission sums, so the total Jacobian an optimizer needs is
nearly block-diagonal: the per-segment design variables of all segments can share one linear
solve. Coloring the columns of the total Jacobian (Coleman, T. F. and Moré, J. J., "Estimation of
sparse Jacobian matrices and graph coloring problems", SIAM J. Numer. Anal. 20(1), 1983,
187-209) turns one solve per design variable into one per color: a handful, whatever the number
of segments.

OpenMDAO can find the pattern itself by computing the total Jacobian with random partials, one
solve per design variable, and it writes the result to a file. Here the pattern follows, without
any solve, from the sparsity every component declares (rows and columns of each partial): the
pattern of a response against a design variable is the Boolean product of the declared patterns
along the explicit, feed-forward chain from the one to the other. It is computed in memory when
the problem is built. The densest rows (a mission total) come from reverse solves and the others
from forward ones, colored greedily (OpenMDAO's own greedy coloring loops over colors per column
and took seconds at 192 segments); the result is handed to the driver as OpenMDAO's
:class:`openmdao.utils.coloring.Coloring`, which its ``compute_totals`` uses as usual.
"""
import numpy as np
from scipy import sparse

from openmdao.core.component import Component
from openmdao.core.explicitcomponent import ExplicitComponent
from openmdao.core.indepvarcomp import IndepVarComp
from openmdao.utils import coloring as om_coloring


def _pattern(info):
    """Boolean sparse matrix of one declared partial (OpenMDAO's subjacobian metadata)."""
    shape = info["shape"]
    if info.get("rows") is not None:
        return sparse.csr_matrix((np.ones(len(info["rows"]), bool),
                                  (info["rows"], info["cols"])), shape=shape)
    if info.get("diagonal"):
        return sparse.identity(shape[0], dtype=bool, format="csr")
    return sparse.csr_matrix(np.ones(shape, bool))


def _flat(indices, size):
    """Flat indices of a design variable's or response's ``indices`` (None: all ``size``)."""
    if indices is None:
        return np.arange(size)
    return np.asarray(indices.flat(), int)


def total_sparsity(problem):
    """The Boolean pattern of the total Jacobian the driver asks for.

    Rows are the driver's nonlinear responses in its order (objectives, then constraints), with
    their indices; columns its design variables, with theirs: the order of
    ``driver._compute_totals()``.

    Parameters
    ----------
    problem : openmdao.api.Problem
        After ``final_setup``. Every component other than the independent variables must be
        explicit (no solver loops): the chains this package builds.

    Returns
    -------
    scipy.sparse.coo_matrix of bool
    ofs, wrts : dict
        The driver's response and design-variable metadata, in that order.

    Raises
    ------
    NotImplementedError
        For a model with implicit components (their pattern would need a solve).
    """
    model = problem.model
    driver = problem.driver
    ofs, wrts, _ = model._get_totals_metadata(driver)
    sizes = {name: meta["size"] for name, meta in model._var_allprocs_abs2meta["output"].items()}
    ncols = sum(meta["size"] for meta in wrts.values())

    # the pattern of each output against the columns, from the design variables down the chain
    reach = {}
    start = 0
    for meta in wrts.values():
        src = meta["source"]
        rows = _flat(meta["indices"], sizes[src])
        seed = sparse.csr_matrix((np.ones(rows.size, bool),
                                  (rows, start + np.arange(rows.size))),
                                 shape=(sizes[src], ncols))
        reach[src] = reach[src] + seed if src in reach else seed
        start += meta["size"]
    sources = model._conn_global_abs_in2out
    shapes = {name: meta["shape"] for name, meta in model._var_allprocs_abs2meta["output"].items()}
    graph = model.get_conn_graph()
    taken = {}      # input -> its source's pattern, through the input's src_indices if any

    def _input_reach(abs_in, src):
        if abs_in not in taken:
            picks = graph.nodes[("i", abs_in)]["attrs"].src_inds_list
            if picks:   # a host's input that takes some entries of its source (Dymos does)
                flat = np.arange(sizes[src]).reshape(shapes[src])
                for pick in picks:
                    flat = pick.indexed_val(flat)
                taken[abs_in] = reach[src][np.asarray(flat).ravel()]
            else:
                taken[abs_in] = reach[src]
        return taken[abs_in]

    for comp in model.system_iter(recurse=True, typ=Component):
        if not isinstance(comp, ExplicitComponent):
            raise NotImplementedError(f"{comp.pathname}: total coloring from the declared "
                                      "partials needs explicit components only")
        if isinstance(comp, IndepVarComp):
            continue
        for (of, wrt), info in comp._subjacs_info.items():
            if of == wrt:   # an explicit output's own (identity) entry
                continue
            src = sources.get(wrt)
            if src not in reach:
                continue
            part = _pattern(info) @ _input_reach(wrt, src)
            reach[of] = reach[of] + part if of in reach else part

    blocks = []
    for meta in ofs.values():
        src = meta["source"]
        cols = reach.get(src, sparse.csr_matrix((sizes[src], ncols), dtype=bool))
        blocks.append(cols[_flat(meta["indices"], sizes[src])])
    return sparse.vstack(blocks).astype(bool).tocoo(), ofs, wrts


def _greedy_groups(part):
    """Columns of the Boolean matrix ``part`` in groups with no row in common: greedy coloring
    of the column intersection graph, largest degree first (Coleman and Moré 1983)."""
    part = part.tocsc().astype(np.int32)
    adjacency = (part.T @ part).tocsr()          # columns that share a row
    degree = np.diff(adjacency.indptr)
    colors = np.full(part.shape[1], -1)
    start, stop = adjacency.indptr[:-1].tolist(), adjacency.indptr[1:].tolist()
    for col in np.argsort(-degree, kind="stable").tolist():
        if degree[col] == 0:
            continue                              # no nonzero: needs no solve
        taken = colors[adjacency.indices[start[col]:stop[col]]]
        used = np.zeros(taken.size + 1, bool)     # a free color is among the first size + 1
        used[taken[(taken >= 0) & (taken <= taken.size)]] = True
        colors[col] = used.argmin()               # the smallest color no neighbour has
    return [sorted(np.flatnonzero(colors == c).tolist()) for c in range(colors.max() + 1)]


def _partition_coloring(pattern, rev_rows):
    """Direct bidirectional coloring (Coleman, T. F. and Verma, A., "The efficient computation
    of sparse Jacobian matrices using automatic differentiation", SIAM J. Sci. Comput. 19(4),
    1998, 1210-1233) of ``pattern`` with the rows ``rev_rows`` (bool per row) recovered from
    reverse solves and every other row from forward solves: the columns are colored over the
    forward rows, the rows over the columns of the reverse rows. Returns OpenMDAO's
    ``Coloring`` (``_fwd``, ``_rev``: the groups and, per column or row, the nonzeros it
    recovers)."""
    pattern = pattern.tocsr()
    coloring = om_coloring.Coloring(sparsity=pattern)
    parts = {}
    for name, rows in (("_fwd", ~rev_rows), ("_rev", rev_rows)):
        part = sparse.csc_matrix(pattern.multiply(rows[:, None]))    # only these rows
        part.eliminate_zeros()
        if part.nnz == 0:
            continue
        if name == "_rev":
            part = part.T.tocsc()
        nz = [part.indices[part.indptr[c]:part.indptr[c + 1]] for c in range(part.shape[1])]
        parts[name] = [_greedy_groups(part), [r if r.size else None for r in nz]]
    coloring._fwd = parts.get("_fwd")
    coloring._rev = parts.get("_rev")
    coloring._meta["bidirectional"] = len(parts) == 2
    return coloring


def _coloring(pattern):
    """The coloring with the fewest solves among a few splits of the rows by their number of
    nonzeros: the densest rows (a mission total depends on every segment) from reverse solves,
    the rest from forward solves; all forward too when there are few columns."""
    counts = np.diff(pattern.tocsr().indptr)
    thresholds = sorted(set(counts.tolist()), reverse=True)[:4]
    if pattern.shape[1] <= 100:
        thresholds.append(counts.max() + 1)     # no row from reverse solves
    best = None
    for threshold in thresholds:
        candidate = _partition_coloring(pattern, counts >= threshold)
        if best is None or candidate.total_solves() < best.total_solves():
            best = candidate
    return best


def color_totals(problem):
    """Give the driver a total coloring from the declared partials (in memory, no file).

    Parameters
    ----------
    problem : openmdao.api.Problem
        After ``final_setup``, with a driver that supports simultaneous derivatives.

    Returns
    -------
    openmdao.utils.coloring.Coloring or None
        Also installed as the driver's coloring: every ``compute_totals`` of the driver then
        does ``coloring.total_solves()`` linear solves instead of one per design variable (or
        per response). None, and nothing installed, when coloring saves no solve (a
        one-segment mission).
    """
    pattern, ofs, wrts = total_sparsity(problem)
    coloring = _coloring(pattern)
    if coloring.total_solves() >= min(pattern.shape):
        return None
    coloring._row_vars = list(ofs)
    coloring._row_var_sizes = [meta["size"] for meta in ofs.values()]
    coloring._col_vars = list(wrts)
    coloring._col_var_sizes = [meta["size"] for meta in wrts.values()]
    coloring._resolver = problem.model._resolver
    coloring._check_config_total(problem.driver, problem.model)   # raises if it does not fit
    problem.driver._coloring_info.coloring = coloring
    problem.driver._total_jac = None
    return coloring
