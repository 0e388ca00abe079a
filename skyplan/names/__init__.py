"""Name resolution: star names, catalogue designations, solar-system bodies."""
