(SELECT 1 AS `c0`, CAST(NULL AS INT4) AS `c1` FROM maint.`Turbine` `t1`) UNION (SELECT NULL AS `c0`, `t1`.`kw` AS `c1` FROM maint.`Turbine` `t1` WHERE (`t1`.`serial` = BINARY ?)) LIMIT ? OFFSET ?
-- args: []interface {}{"it's", 9223372036854775807, 5}
