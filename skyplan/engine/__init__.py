"""The pure, vectorised computation: time scales, frames, events, nights, windows."""
