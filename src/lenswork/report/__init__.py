"""A self-contained HTML page to explore a screen and a graph in the browser.

Public surface
--------------
write_report
    Write the page (one HTML file, no network access at view time).
report_html
    The page as text.
report_data
    The JSON document the page carries (node-level data; DEVELOPERS.md, "The report page").
encode_members, decode_members
    The compact member encoding (delta-coded row positions, LEB128, base64).
contrast_sample
    The rows the page's contrasts use above 100,000 rows (a seeded sample).
read_screen
    A screen result, document or folder as the page needs it.
"""

from ._data import (
    CONTRAST_ROWS,
    FORMAT,
    FORMAT_VERSION,
    contrast_sample,
    decode_members,
    encode_members,
    read_screen,
    report_data,
)
from ._page import report_html, write_report

__all__ = [
    "CONTRAST_ROWS",
    "FORMAT",
    "FORMAT_VERSION",
    "contrast_sample",
    "decode_members",
    "encode_members",
    "read_screen",
    "report_data",
    "report_html",
    "write_report",
]
