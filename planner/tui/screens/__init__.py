"""The app's screens: tonight (almanac and targets), the night's plan, and help."""
