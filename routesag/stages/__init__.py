"""Built-in pipeline stages. Each module holds one stage; see routesag.pipeline."""
