mod factorial;
