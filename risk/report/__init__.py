"""Reporting: JSON summaries (pure), figures and the memo, and the one module that writes files."""
