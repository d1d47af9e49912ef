"""Pieces every family shares: input rules, scales, the result base, notes and errors.

numpy only; nothing here imports anything else of ours.
"""
