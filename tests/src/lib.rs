//! Shared fixtures for Hysteron's reference checks and browser end-to-end tests.
