"""Built-in demo scenarios (invented for illustration; not measured data)."""
