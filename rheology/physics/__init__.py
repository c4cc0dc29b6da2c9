"""Pure-numpy physics: one function per published relation, SI units."""
