"""curvewright's dashboard and command line (they call ``core``; core never imports them)."""
