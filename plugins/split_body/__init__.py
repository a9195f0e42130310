"""Split-body plugin: a rigid body replaced by beam-joined segments (see split.py)."""
