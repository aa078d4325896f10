"""The headless ``mixtype`` commands (no Qt): the registry and options the parser is built from (standard
library only), one implementation module per command, and study assembly from options and files."""
