mod cli_linear;
mod cli_run;
mod cli_tree;
