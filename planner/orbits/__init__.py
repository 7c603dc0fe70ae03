"""Stage 1, orbits: Kepler's equation, event geometry of the orbit and predicted event times.

``kepler`` solves Kepler's equation and converts anomalies; ``geometry`` places the events on the
orbit (true anomalies, Tp <-> Tc, RV curve, impact parameters, eclipse durations); ``events``
predicts every event's BJD_TDB and 1-sigma uncertainty over a span. Imports only ``timescales``.
"""
