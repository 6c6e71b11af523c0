"""What every floor shares: errors that carry an exit code, and problems reported to the technician."""
