/* version.h - the tool's version (the Makefile reads it for the pkg-config file). */
#ifndef TL_HOST_VERSION_H
#define TL_HOST_VERSION_H
#define TL_TOOL_VERSION "0.3.0"
#endif
