//! Workspace-level tests.
