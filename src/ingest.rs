//! Reading a whole file: streamed, split on line boundaries, parsed on both cores.
