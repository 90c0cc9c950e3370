"""The caution every output of slipfield carries (results.json, the report, the console)."""

CAUTION = ("slipfield's results support, and do not replace, engineering judgement. Probabilities of "
           "failure depend strongly on the assumed statistics and models; check every result and defer "
           "to local codes, standards and licensed professional practice.")

__all__ = ["CAUTION"]
