"""Public import paths kept for users: the report lives in :mod:`synth.outputs.report`."""
