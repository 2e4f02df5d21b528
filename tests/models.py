"""Small models with known answers, shared by the solver, certificate and CLI tests.

Each entry: (id, YAML text, status, exact objective or None, source of the answer).
"""

from fractions import Fraction as F

KNOWN = [
    (
        "three-resource",
        "maximize: 5 x1 + 4 x2 + 3 x3\nvariables: {x1: {}, x2: {}, x3: {}}\nconstraints:\n"
        "  r1: 2 x1 + 3 x2 + x3 <= 5\n  r2: 4 x1 + x2 + 2 x3 <= 11\n  r3: 3 x1 + 4 x2 + 2 x3 <= 8\n",
        "optimal", F(13),
        # V. Chvatal, Linear Programming (1983), ch. 2, first worked example; optimum 13
        # at (2, 0, 1). From memory; checked here against SymPy's exact routine too.
        "Chvatal 1983 ch. 2 (from memory)",
    ),
    (
        "two-product",
        "maximize: 3 x1 + 5 x2\nvariables: {x1: {}, x2: {}}\nconstraints:\n"
        "  plant1: x1 <= 4\n  plant2: 2 x2 <= 12\n  plant3: 3 x1 + 2 x2 <= 18\n",
        "optimal", F(36),
        # Hillier & Lieberman, Introduction to Operations Research, ch. 3 prototype
        # example; optimum 36 at (2, 6). From memory; SymPy confirms.
        "Hillier & Lieberman ch. 3 (from memory)",
    ),
    (
        "beale",
        # E. M. L. Beale, "Cycling in the dual simplex algorithm", Naval Research
        # Logistics Quarterly 2 (1955), as usually reproduced (from memory):
        #   maximize 3/4 x4 - 20 x5 + 1/2 x6 - 6 x7
        #   1/4 x4 - 8 x5 - x6 + 9 x7 <= 0,  1/2 x4 - 12 x5 - 1/2 x6 + 3 x7 <= 0,  x6 <= 1
        # written here as a minimisation, optimum -5/4.  By hand: x4 = 1, x6 = 1 gives
        # rows -3/4 <= 0 and 0 <= 0 and objective -(3/4 + 1/2) = -5/4; the multipliers
        # y = (0, 3/2, 5/4) on the three rows prove it (c - A^T y >= 0 on x4..x7).
        "minimize: -3/4 x4 + 20 x5 - 1/2 x6 + 6 x7\nvariables: {x4: {}, x5: {}, x6: {}, x7: {}}\n"
        "constraints:\n  r1: 1/4 x4 - 8 x5 - x6 + 9 x7 <= 0\n  r2: 1/2 x4 - 12 x5 - 1/2 x6 + 3 x7 <= 0\n"
        "  r3: x6 <= 1\n",
        "optimal", F(-5, 4), "Beale 1955 (from memory), by hand",
    ),
    (
        "infeasible-pair",
        "minimize: x + y\nvariables: {x: {upper: 3}, y: {upper: 2}}\nconstraints:\n  need: x + y >= 6\n",
        "infeasible", None, "by hand: x + y <= 5 < 6",
    ),
    (
        "unbounded-ray",
        "maximize: x - y\nvariables: {x: {}, y: free}\nconstraints:\n  link: x - y >= -4\n  cap: y <= 10\n",
        "unbounded", None, "by hand: x grows without limit",
    ),
    (
        "bounds-only",
        "minimize: 3 x - 2 y + 1/2\nvariables: {x: {lower: 1, upper: 4}, y: {lower: -inf, upper: 7}}\n",
        "optimal", F(3) - 14 + F(1, 2), "by hand: x = 1, y = 7",
    ),
    (
        "bounds-only-unbounded",
        "minimize: -x\nvariables: {x: {}}\n",
        "unbounded", None, "by hand",
    ),
    (
        "redundant-equalities",
        "minimize: x + 2 y\nvariables: {x: {}, y: {}}\nconstraints:\n"
        "  sum: x + y == 4\n  twice: 2 x + 2 y == 8\n  even: x - y == 0\n",
        "optimal", F(6), "by hand: x = y = 2",
    ),
    (
        "inconsistent-equalities",
        "minimize: x\nvariables: {x: {}, y: {}}\nconstraints:\n  sum: x + y == 4\n  twice: 2 x + 2 y == 9\n",
        "infeasible", None, "by hand: 2 * 4 != 9",
    ),
    (
        "free-fixed-negative",
        "maximize: 2 f + y - z\nvariables:\n  f: free\n  y: {fixed: 3}\n  z: {lower: -5, upper: -1}\n"
        "constraints:\n  top: f + y <= 10\n  mix: f - z <= 9\n",
        "optimal", F(19),
        # by hand: f <= min(7, 9 + z); for z >= -2 take f = 7 and 17 - z is largest at
        # z = -2; for z < -2, f = 9 + z gives 21 + z < 19.  So 19 at f = 7, z = -2.
        "by hand",
    ),
    (
        "ranged",
        "minimize: x - y\nvariables: {x: {}, y: {upper: 20}}\nconstraints:\n"
        "  band: 2 <= x + y <= 8\n  gap: -3 <= x - y <= 3\n",
        "optimal", F(-3), "by hand: x - y at its lower range end -3",
    ),
    (
        "empty-row-infeasible",
        "minimize: x\nvariables: {x: {}}\nconstraints:\n  odd: x - x >= 5\n",
        "infeasible", None, "by hand: 0 >= 5",
    ),
    (
        "crossed-bounds",
        "minimize: x\nvariables: {x: {lower: 5, upper: 3}}\n",
        "infeasible", None, "by hand",
    ),
    (
        "crossed-row",
        "minimize: x\nvariables: {x: {}}\nconstraints:\n  r: {terms: {x: 1}, lower: 4, upper: 2}\n",
        "infeasible", None, "by hand",
    ),
    (
        "degenerate-vertex",
        "maximize: x + y\nvariables: {x: {}, y: {}}\nconstraints:\n"
        "  a: x + 2 y <= 4\n  b: 2 x + y <= 4\n  c: x + y <= 8/3\n  d: 3 x + 3 y <= 8\n",
        "optimal", F(8, 3), "by hand: x = y = 4/3 on four rows at once",
    ),
    (
        "feasibility-only",
        "minimize: 0\nvariables: {x: {}, y: {}}\nconstraints:\n  a: x + y >= 2\n  b: x - y == 1\n",
        "optimal", F(0), "by hand",
    ),
]


def klee_minty(n: int) -> str:
    """The Klee-Minty cube (V. Klee and G. J. Minty, 1972), in the usual form:
    maximize sum_j 2^(n-j) x_j  s.t.  2 sum_{j<i} 2^(i-j) x_j + x_i <= 5^i,  x >= 0,
    whose optimum is 5^n (x_n = 5^n)."""
    names = [f"x{j}" for j in range(1, n + 1)]
    obj = " + ".join(f"{2 ** (n - j)} x{j}" for j in range(1, n + 1))
    rows = []
    for i in range(1, n + 1):
        terms = [f"{2 ** (i - j + 1)} x{j}" for j in range(1, i)] + [f"x{i}"]
        rows.append(f"  r{i}: {' + '.join(terms)} <= {5 ** i}")
    return (f"maximize: {obj}\nvariables: {{{', '.join(n + ': {}' for n in names)}}}\nconstraints:\n"
            + "\n".join(rows) + "\n")


#: three columns with two bounds each, where the dual phase's first ratio test
#: flips two of them (worked by hand in tests/test_dual.py)
FLIPS = """
minimize: x1 + 2 x2 + 3 x3
variables:
  x1: {lower: 0, upper: 1}
  x2: {lower: 0, upper: 1}
  x3: {lower: 0, upper: 10}
constraints:
  r: x1 + x2 + x3 >= 5
"""


def drawn_text(rng, n: int, m: int, cost, coef, relation: str, rhs, row: str = "r") -> str:
    """A small random model's text (invented numbers): ``minimize`` the costs
    ``cost()`` over ``x0 .. x(n-1) >= 0``, and ``m`` rows of one to three terms
    with coefficients ``coef()``, each ``relation rhs()``; every draw from
    ``rng``, in a fixed order."""
    text = "minimize: " + " + ".join(f"{cost()} x{j}" for j in range(n)) + "\nvariables:\n"
    text += "".join(f"  x{j}: {{}}\n" for j in range(n)) + "constraints:\n"
    for i in range(m):
        terms = " + ".join(f"{coef()} x{j}" for j in rng.sample(range(n), rng.randint(1, 3)))
        text += f"  {row}{i}: {terms} {relation} {rhs()}\n"
    return text
