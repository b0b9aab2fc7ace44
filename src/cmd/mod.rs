//! One module per subcommand.
