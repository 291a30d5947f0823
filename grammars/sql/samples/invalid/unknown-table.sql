SELECT name FROM farmers
