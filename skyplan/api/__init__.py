"""The public Python API of skyplan, one module per topic (``import skyplan`` exposes it).

``sites`` (where), ``targets`` (what), ``night`` (when), ``windows`` (limits and windows),
``plan`` (the night's visits), ``positions`` (frame conversion and name look-up), ``clock``
(time at a site), ``bulk`` (large catalogues, computed and written block by block),
``charts`` (what the charts show; plan files read back), ``times`` (how
instants are handed out: timezone-aware datetimes and astropy Time columns).
"""
