"""What the equation is where: discriminant, type maps, type-change lines, parabolic regions, pockets, characteristics, probes."""
