"""Outputs: everything that formats results (JSON, text, forms, comparisons, reports, files).

Outputs only format what the verdicts carry; they never reach back into the search.
"""
