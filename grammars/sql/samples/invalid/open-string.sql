SELECT name FROM growers WHERE village = 'Oakmere
