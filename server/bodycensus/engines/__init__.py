"""Engines run the same checks over a catalogue: on one machine (``local``) or distributed."""
