"""`dropper audit`: registered here when built (see DEVELOPERS.md)."""
