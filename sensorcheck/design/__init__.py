"""Design = Board + Config: roles of nets, sensors, sensing zones, the overlay stack."""
