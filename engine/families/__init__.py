"""The distribution families of the trade and their samplers."""
