"""Application services: one function per request a face (terminal, web) makes; each
returns a typed result that the face renders."""
