"""The simulation room: seeded physical scenarios (narrow kinds), families (wide ranges) and vessels (fixed products)."""
