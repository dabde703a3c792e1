"""`dropper parts`: registered here when built (see DEVELOPERS.md)."""
