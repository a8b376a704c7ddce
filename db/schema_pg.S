/* db/schema_pg.S - embeds db/schema_pg.sql (the server's schema) in the binary as the NUL-terminated string hb_db_schema_pg_sql */
	.section .rodata
	.global hb_db_schema_pg_sql
	.type hb_db_schema_pg_sql, @object
hb_db_schema_pg_sql:
	.incbin "db/schema_pg.sql"
	.byte 0
	.size hb_db_schema_pg_sql, . - hb_db_schema_pg_sql
	.section .note.GNU-stack, "", @progbits
