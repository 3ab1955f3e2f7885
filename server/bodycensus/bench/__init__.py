"""The benchmark floor: ``bodycensus bench``'s measurements of whole processes (plain polars
floors, ``bodycensus check``, a plain pandas reference of the rules) and of a served dashboard's
latency, each against a baseline measured in the same run.

It sits above the dashboard and below the command line: it starts ``bodycensus check`` and
``bodycensus serve`` as child processes and reads what they wrote, never their internals.
"""
