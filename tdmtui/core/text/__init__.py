"""Text for people: the chart note, the command-line summary, the working and the
safety text."""
