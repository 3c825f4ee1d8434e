//! The command-line contract: exit codes, files written, messages.
