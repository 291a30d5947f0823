SELECT name WHERE id = 1
