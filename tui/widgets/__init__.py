"""Widgets of the explorer, one per module. They draw what they are given; they never solve."""
