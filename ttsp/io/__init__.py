"""Edges of ttsp: reading campaigns from files and writing results (layer 4)."""
