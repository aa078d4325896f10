"""The headless ``mixtype`` commands (no Qt): one module per command, plus study assembly from options and files."""
