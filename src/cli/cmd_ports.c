/* src/cli/cmd_ports.c - command `ports`: list the serial ports libserialport can see, with USB identity where known */
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>
#include <libserialport.h>

#include "cli.h"

typedef struct ports_args {
	bool json;
} ports_args;

static const hb_opt ports_table[] = {
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(ports_args, json),
	  .help = "one JSON array on stdout instead of the table" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_ports = {
	.name = "ports",
	.usage = "[--json]",
	.about = "\nLists the serial ports of this machine (through libserialport) with the resource\n"
		 "string to open each: name, description, transport (native, usb, bluetooth), USB\n"
		 "vendor:product id, manufacturer, product and serial number where the port tells.\n"
		 "Pseudo-terminals and serial-over-network bridges are not listed: open those\n"
		 "with tty:PATH (see docs/resources.md).\n",
	.opts = ports_table,
	.max_operands = 0,
};

static const char *transport_name(enum sp_transport t)
{
	switch (t) {
	case SP_TRANSPORT_NATIVE: return "native";
	case SP_TRANSPORT_USB: return "usb";
	case SP_TRANSPORT_BLUETOOTH: return "bluetooth";
	}
	return "unknown";
}

static const char *or_empty(const char *s)
{
	return s ? s : "";
}

static json_t *port_json(struct sp_port *port)
{
	enum sp_transport transport = sp_get_port_transport(port);
	json_t *o = json_object();
	if (!o)
		return NULL;
	char resource[300];
	snprintf(resource, sizeof resource, "serial:%s", or_empty(sp_get_port_name(port)));
	json_object_set_new(o, "name", json_string(or_empty(sp_get_port_name(port))));
	json_object_set_new(o, "resource", json_string(resource));
	json_object_set_new(o, "description", json_string(or_empty(sp_get_port_description(port))));
	json_object_set_new(o, "transport", json_string(transport_name(transport)));
	if (transport == SP_TRANSPORT_USB) {
		int vid = 0, pid = 0;
		if (sp_get_port_usb_vid_pid(port, &vid, &pid) == SP_OK) {
			char id[16];
			snprintf(id, sizeof id, "%04x:%04x", (unsigned)vid & 0xffffu, (unsigned)pid & 0xffffu);
			json_object_set_new(o, "usb_id", json_string(id));
		}
		const char *m = sp_get_port_usb_manufacturer(port);
		const char *p = sp_get_port_usb_product(port);
		const char *s = sp_get_port_usb_serial(port);
		json_object_set_new(o, "manufacturer", m ? json_string(m) : json_null());
		json_object_set_new(o, "product", p ? json_string(p) : json_null());
		json_object_set_new(o, "serial", s ? json_string(s) : json_null());
	} else if (transport == SP_TRANSPORT_BLUETOOTH) {
		const char *mac = sp_get_port_bluetooth_address(port);
		json_object_set_new(o, "bluetooth_address", mac ? json_string(mac) : json_null());
	}
	return o;
}

static void port_print(struct sp_port *port)
{
	enum sp_transport transport = sp_get_port_transport(port);
	char usb_id[16] = "-";
	if (transport == SP_TRANSPORT_USB) {
		int vid = 0, pid = 0;
		if (sp_get_port_usb_vid_pid(port, &vid, &pid) == SP_OK)
			snprintf(usb_id, sizeof usb_id, "%04x:%04x", (unsigned)vid & 0xffffu, (unsigned)pid & 0xffffu);
	}
	printf("%-20s %-9s %-9s %s\n", or_empty(sp_get_port_name(port)), transport_name(transport), usb_id,
	       or_empty(sp_get_port_description(port)));
	if (transport == SP_TRANSPORT_USB) {
		const char *m = sp_get_port_usb_manufacturer(port);
		const char *p = sp_get_port_usb_product(port);
		const char *s = sp_get_port_usb_serial(port);
		if (m || p || s)
			printf("%20s manufacturer: %s; product: %s; serial number: %s\n", "", m ? m : "?", p ? p : "?",
			       s ? s : "?");
	} else if (transport == SP_TRANSPORT_BLUETOOTH) {
		const char *mac = sp_get_port_bluetooth_address(port);
		if (mac)
			printf("%20s bluetooth address: %s\n", "", mac);
	}
}

int hb_cmd_ports(int argc, char **argv)
{
	ports_args a = { .json = false };
	hb_opts_result res;
	if (hb_opts_parse(&hb_opts_ports, argc, argv, &a, &res) != HB_OK)
		return HB_EXIT_USAGE;
	if (res.done)
		return HB_EXIT_OK;
	bool json = a.json;

	struct sp_port **list = NULL;
	enum sp_return r = sp_list_ports(&list);
	if (r != SP_OK) {
		char *why = r == SP_ERR_FAIL ? sp_last_error_message() : NULL;
		hb_cli_error("ports: cannot list serial ports: %s", why ? why : "libserialport failed");
		sp_free_error_message(why);
		return HB_EXIT_RUNTIME;
	}
	size_t n = 0;
	while (list[n])
		n++;

	int rc = HB_EXIT_OK;
	if (json) {
		json_t *array = json_array();
		for (size_t i = 0; array && i < n; i++) {
			json_t *o = port_json(list[i]);
			if (!o || json_array_append_new(array, o) < 0) {
				json_decref(array);
				array = NULL;
			}
		}
		if (!array || json_dumpf(array, stdout, JSON_INDENT(2)) < 0) {
			hb_cli_error("ports: out of memory writing JSON");
			rc = HB_EXIT_RUNTIME;
		} else {
			fputc('\n', stdout);
		}
		json_decref(array);
	} else if (n == 0) {
		printf("no serial ports found\n"
		       "(pseudo-terminals and network bridges are not listed; open them with tty:PATH)\n");
	} else {
		printf("%-20s %-9s %-9s %s\n", "PORT", "KIND", "USB ID", "DESCRIPTION");
		for (size_t i = 0; i < n; i++)
			port_print(list[i]);
		printf("\nopen one with serial:PORT[?baud=9600&parity=none&stop=1&flow=none]\n");
	}
	sp_free_port_list(list);
	return rc;
}
