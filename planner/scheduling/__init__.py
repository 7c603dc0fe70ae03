"""Stage 4, scheduling: observing requests, their scores and the week's choice of blocks.

``requests`` turns visible events into observing requests (series with contacts, RV visits,
RV sequences, monitors; ``request_merge``, ``series_parts`` and ``monitor`` help it); ``score``
holds the explainable score terms; ``candidates`` makes candidate blocks of the requests;
``options`` and ``choose`` turn them into one model of the week that ``solver`` solves exactly;
``schedule`` ties them into ``plan_week`` with notes per block; ``coverage`` reads an
observation log against the orbits. Does no astronomy or time-scale work of its own. Imports
``sky`` and below.
"""
