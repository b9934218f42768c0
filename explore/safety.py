"""The safety caution every command and page shows, worded once.

``hopscape drop``, ``track``, ``fit``, ``plan`` and ``report.html`` print this same
text, so a change of wording reaches them all.
"""
from __future__ import annotations

SAFETY = ("Drops from height and heavy, sharp or brittle parts (glass, coated tablets that shatter) can injure "
          "people nearby: parts and fragments fly off unpredictably, so wear eye protection, guard the drop zone, "
          "keep hands clear of release jigs, and follow your site's safety rules, which take precedence over "
          "anything here.")
