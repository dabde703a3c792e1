"""`dropper design`: registered here when built (see DEVELOPERS.md)."""
