"""Stage 3, sky: where the Sun, the Moon and the targets are, and when a target can be observed.

``positions`` gives alt/az, hour angle and airmass of N targets at T times and the Sun/Moon
tracks; ``crossings`` is the one zero-crossing search; ``night`` makes the night table;
``windows`` folds the site's limits into observable intervals and each event's window.
Imports ``inputs`` and below.
"""
