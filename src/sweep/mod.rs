//! Parameter sweeps: sweep file, expansion into cases, local runs, Slurm arrays, collection.
