mod cli_linear;
