"""One screen per module: work list, cluster view, thresholds, key list and dialogs."""
