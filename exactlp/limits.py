"""Documented resource caps for everything exactlp reads.

Inputs may come from another party, so every reader is bounded.  The caps
are generous for real models (the largest Netlib file is far inside them)
and can be raised by passing a different :class:`Limits` to the readers.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Limits:
    #: largest input file read, in bytes (after decompression for ``.gz``)
    max_file_bytes: int = 64 * 1024 * 1024
    #: most characters in the text of one number
    max_number_chars: int = 400
    #: largest absolute decimal exponent in ``1.5e-3`` style numbers
    max_exponent: int = 400
    #: deepest nesting of YAML collections
    max_depth: int = 32
    #: most variables (columns) in one model
    max_variables: int = 1_000_000
    #: most constraints (rows) in one model
    max_constraints: int = 1_000_000
    #: most nonzero coefficients in one model
    max_nonzeros: int = 20_000_000
    #: most characters in one expression or formula.  Reading one is linear:
    #: about 0.3 s and 18 MB of memory per million characters (measured on a sum
    #: of 30,000 to 1,500,000 terms), so this cap holds one formula to about 5 s
    #: and 300 MB.  A generated network of 3,000 rows has an objective of 1.09
    #: million characters (58,605 pipes), which the earlier cap of 1,000,000
    #: refused; the structured ``terms:`` form has no cap of its own beyond the
    #: file's and the nonzeros'
    max_expression_chars: int = 16_000_000
    #: most characters in one number of a certificate or log (exact solutions are
    #: ratios of basis determinants and legitimately run to thousands of digits)
    max_result_number_chars: int = 200_000
    #: most exact numbers in a sensitivity report written to a file: the optimal
    #: certificate and each range's direction (dense directions make it grow with
    #: the square of the model: at most about (n + m) m; BANDM's holds 64,121
    #: numbers, 13 MB); past this, refused before anything is written (a ranges
    #: report too)
    max_report_numbers: int = 10_000_000
    #: most digits in all in such a report (or a ranges report), about its size
    #: in bytes: exact values of thousands of digits (STAIR's) made a sensitivity
    #: report of 317 MB that took 1.5 GB of memory and 97 s to write
    max_report_digits: int = 100_000_000


DEFAULT_LIMITS = Limits()
