"""The π system: perception, Hückel and Hückel–London currents, the π summary."""
