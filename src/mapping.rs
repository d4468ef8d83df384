//! Column mapping: roles and units, guessed from header names or given with `--map`.
