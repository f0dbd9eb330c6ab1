"""The one caution every output of trainopt carries, word for word.

Printed under each table, written into each file (a ``caution`` key in JSON, a caution row
in CSV, a ``caution`` sheet in Excel), drawn on each map picture and shown in each command's
help. It lives here, at the top of the package with no imports, so that every layer (the
command line's help text included) can print it without loading anything heavy.
"""

CAUTION = ("Advisory only: trainopt does not replace the anti-surge controller, the "
           "vendor's data or an engineer's judgement; follow local codes and licensed practice.")
"""The caution, one sentence, the same on screen, in files, in pictures and in help."""
