mod cli_linear;
mod cli_mpi;
mod cli_pair_stats;
mod cli_pairs;
mod cli_run;
mod cli_safety;
mod cli_tree;
