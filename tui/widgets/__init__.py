"""One widget per module; each draws one part of a screen from data it is handed."""
