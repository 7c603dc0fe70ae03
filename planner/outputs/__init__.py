"""Stage 5, outputs: tables for people and every file a plan writes.

``tables`` makes display tables (UTC/local strings, minutes) and renders them as text, CSV or
JSON; ``sheets``, ``charts`` and ``ical`` write nightly lists, PNG charts and the calendar;
``plan_folder`` writes a whole plan folder through ``atomic``. Imports ``scheduling`` and below.
"""
