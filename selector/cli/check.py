"""`dropper check`: registered here when built (see DEVELOPERS.md)."""
