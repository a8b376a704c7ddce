/* db/schema.S - embeds db/schema.sql in the binary as the NUL-terminated string hb_db_schema_sql */
	.section .rodata
	.global hb_db_schema_sql
	.type hb_db_schema_sql, @object
hb_db_schema_sql:
	.incbin "db/schema.sql"
	.byte 0
	.size hb_db_schema_sql, . - hb_db_schema_sql
	.section .note.GNU-stack, "", @progbits
