"""The `rangefold` command: reports and checks from the terminal, or the window."""
