"""The normal shortcut, its better-informed neighbours, and why it holds or fails."""
