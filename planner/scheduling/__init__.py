"""Stage 4, scheduling: candidate blocks, their scores and the choice of blocks for each night.

``score`` holds the explainable score terms; ``candidates`` turns visible events into scored
blocks; ``intervals`` chooses non-overlapping blocks exactly; ``flexible`` fills the gaps with
flexible visits; ``week`` applies the repeat rule across nights; ``schedule`` ties them into
``plan_week``. Does no astronomy or time-scale work of its own. Imports ``sky`` and below.
"""
