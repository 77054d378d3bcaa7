mod cli_linear;
mod cli_tree;
