"""Pure physics: propagation, thermal noise, fading, receiver rejection."""
