"""Results as documents and tables: what the command line prints and the window exports."""
