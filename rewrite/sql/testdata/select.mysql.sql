SELECT DISTINCT `t1`.`serial` AS `c0`, CAST(`t1`.`kw` AS TEXT) AS `c1` FROM maint.`Turbine` `t1`, (SELECT * FROM site) `t2` WHERE (((`t1`.`site_id` = `t2`.`site_id`) AND (`t1`.`model` < BINARY ?)) AND (`t1`.`serial` IS NOT NULL)) LIMIT ? OFFSET ?
-- args: []interface {}{"V90", 10, 5}
