"""Modal screens of the explorer: finder, forms, pickers, prompts and help."""
