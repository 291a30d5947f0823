# Hand-written questions over the cooperative's database (grammars/sql/coop.sql), one program per
# line, each in canonical layout. Lines starting with # and blank lines are not programs.
SELECT * FROM growers
SELECT name, village FROM growers WHERE joined_year < 2005 ORDER BY joined_year ASC
SELECT DISTINCT village FROM growers ORDER BY village
SELECT COUNT(*) FROM orchards WHERE altitude_m > 300
SELECT name, hectares FROM orchards ORDER BY hectares DESC LIMIT 3
SELECT AVG(hectares), MAX(altitude_m) FROM orchards WHERE planted_year BETWEEN 1990 AND 2005
SELECT name FROM varieties WHERE fruit = 'plum' AND harvest_month >= 8
SELECT fruit, COUNT(*) FROM varieties GROUP BY fruit
SELECT name FROM sheds WHERE temperature_c <= 1.5 OR capacity_tonnes > 300
SELECT name FROM sheds WHERE NOT temperature_c > 2.5
SELECT year, SUM(tonnes) FROM lots GROUP BY year ORDER BY year
SELECT grade, COUNT(DISTINCT orchard_id) FROM lots WHERE year = 2024 GROUP BY grade
SELECT year, SUM(tonnes) FROM lots GROUP BY year HAVING SUM(tonnes) > 500 ORDER BY SUM(tonnes) DESC
SELECT orchard_id, COUNT(*) FROM lots WHERE grade = 'A' GROUP BY orchard_id HAVING COUNT(*) >= 3
SELECT name FROM orchards WHERE name LIKE '%Ridge%'
SELECT name FROM growers WHERE name LIKE 'M%' OR village LIKE 'Little%'
SELECT name FROM orchards WHERE id IN (SELECT orchard_id FROM lots WHERE year = 2025 AND grade = 'C')
SELECT name FROM varieties WHERE id IN (SELECT variety_id FROM lots WHERE tonnes > 50) ORDER BY name
SELECT name FROM growers WHERE NOT (village = 'Oakmere' OR village = 'Fernlow')
SELECT MIN(tonnes), MAX(tonnes), AVG(tonnes) FROM lots WHERE year BETWEEN 2019 AND 2021 AND grade <> 'C'
SELECT orchards.name, growers.name FROM orchards JOIN growers ON orchards.grower_id = growers.id
SELECT growers.village, SUM(orchards.hectares) FROM orchards JOIN growers ON orchards.grower_id = growers.id GROUP BY growers.village ORDER BY SUM(orchards.hectares) DESC
SELECT sheds.name, SUM(lots.tonnes) FROM lots JOIN sheds ON lots.shed_id = sheds.id WHERE lots.year = 2024 GROUP BY sheds.name
SELECT DISTINCT varieties.name FROM lots JOIN varieties ON lots.variety_id = varieties.id JOIN orchards ON lots.orchard_id = orchards.id WHERE orchards.altitude_m > 400
SELECT growers.name, COUNT(*) FROM lots JOIN orchards ON lots.orchard_id = orchards.id JOIN growers ON orchards.grower_id = growers.id WHERE lots.grade = 'A' GROUP BY growers.name HAVING COUNT(*) > 4 ORDER BY COUNT(*) DESC LIMIT 5
SELECT varieties.fruit, AVG(lots.tonnes) FROM lots JOIN varieties ON lots.variety_id = varieties.id GROUP BY varieties.fruit
SELECT lots.year, lots.tonnes FROM lots JOIN sheds ON lots.shed_id = sheds.id WHERE sheds.name = 'River Barn' AND (lots.grade = 'A' OR lots.grade = 'B') ORDER BY lots.tonnes DESC LIMIT 10
SELECT name FROM growers WHERE name = 'O''Leary'
