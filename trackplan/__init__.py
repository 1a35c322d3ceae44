"""trackplan: thermal stress planning for continuous welded rail (CWR).

Physics lives in pure functions over SI floats and numpy arrays; units are
parsed and formatted at the edges (:mod:`trackplan.units`); the command line
(:mod:`trackplan.cli`) is a thin layer over the computation modules.
"""

__version__ = "0.1.0"

#: Short caution printed under every result a person may act on.
CAUTION = (
    "Planning aid only. Follow your railway's CWR procedures and local regulations; "
    "decisions on track stability, speed restrictions and destressing are for qualified, "
    "authorised track engineers. Measure rail temperature on site with a calibrated rail thermometer."
)
