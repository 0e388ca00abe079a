"""The night plan: visits placed in the targets' windows."""
