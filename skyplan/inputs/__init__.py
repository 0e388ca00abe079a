"""The input edge: sites, catalogues, angles, times, limits and orbital elements, parsed
and validated."""
