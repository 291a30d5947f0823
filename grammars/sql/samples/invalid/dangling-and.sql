SELECT * FROM lots WHERE tonnes > 5 AND
