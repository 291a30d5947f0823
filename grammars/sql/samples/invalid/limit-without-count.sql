SELECT name, village
FROM growers
ORDER BY joined_year DESC LIMIT
