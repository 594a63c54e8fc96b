"""Report: findings rendered for people (text) and for scripts (JSON)."""
