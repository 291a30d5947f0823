SELECT name, FROM growers
